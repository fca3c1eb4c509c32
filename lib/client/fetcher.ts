'use client';
// Client-side JSON calls to our route handlers, with the API's error body turned into a readable Error.

export class ApiClientError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly issues: { path: string; message: string }[] = [],
  ) {
    super(message);
  }
}

async function parse<T>(response: Response): Promise<T> {
  const body = await response.json().catch(() => null);
  if (!response.ok) {
    const error = body?.error ?? {};
    const message =
      // Only a missing or ended session is "session ended"; a refused sign-in says why itself.
      response.status === 401 && error.code === 'unauthenticated'
        ? 'Your session has ended. Reload the page to sign in again.'
        : (error.message ?? `Request failed (${response.status}).`);
    throw new ApiClientError(response.status, error.code ?? 'error', message, error.issues);
  }
  return body as T;
}

export const fetcher = <T,>(url: string) => fetch(url, { headers: { accept: 'application/json' } }).then((r) => parse<T>(r));

export function send<T>(url: string, method: 'POST' | 'PUT' | 'PATCH' | 'DELETE', body?: unknown): Promise<T> {
  return fetch(url, {
    method,
    headers: { 'content-type': 'application/json', accept: 'application/json' },
    body: body === undefined ? '{}' : JSON.stringify(body),
  }).then((r) => parse<T>(r));
}

/** A file and its form fields as multipart/form-data; errors read like send()'s, with the first issues listed. */
export async function upload<T>(url: string, fields: Record<string, string>, file: File): Promise<T> {
  const form = new FormData();
  form.set('file', file);
  for (const [k, v] of Object.entries(fields)) form.set(k, v);
  const response = await fetch(url, { method: 'POST', body: form, headers: { accept: 'application/json' } });
  const data = await response.json().catch(() => null);
  if (!response.ok) {
    const issues = (data?.error?.issues ?? []) as { path: string; message: string }[];
    throw new Error([data?.error?.message ?? `Upload failed (${response.status}).`, ...issues.slice(0, 5).map((i) => `${i.path}: ${i.message}`)].join('\n'));
  }
  return data as T;
}
