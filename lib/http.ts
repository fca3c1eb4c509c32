import 'server-only';
import { NextResponse } from 'next/server';
import { ZodError, type z } from 'zod';
import { crossSiteReason } from '@/lib/origin';
import { findTextProblem, withWellFormedText } from '@/lib/validation/text';

/** A caller's mistake, answered as `{"error":{"code","message","issues"}}` with a 4xx status. */
export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly issues: { path: string; message: string }[] = [],
    readonly extra: Record<string, unknown> = {},
    readonly headers: Record<string, string> = {},
  ) {
    super(message);
  }
}

export const notFound = (what: string) => new ApiError(404, 'not_found', `${what} was not found.`);

export function errorBody(code: string, message: string, issues: { path: string; message: string }[] = []) {
  return { error: { code, message, issues } };
}

function zodIssues(error: ZodError) {
  return error.issues.map((i) => ({ path: i.path.join('.'), message: i.message }));
}

/**
 * An error as it may be logged: the SQL text and the database's own error code and message, never the
 * query's parameters (names, notes, results). Drizzle puts them in the message ("params: …") and in .params.
 */
export function redactedError(error: unknown): string {
  if (!(error instanceof Error)) return String(error);
  const strip = (message: string) => message.replace(/\nparams:[\s\S]*$/, '\nparams: [redacted]');
  const cause = error.cause as { code?: string; message?: string } | undefined;
  const lines = [`${error.name}: ${strip(error.message)}`];
  // PostgreSQL quotes the offending value in its message (invalid input syntax …: "value"): drop it.
  if (cause?.message) lines.push(`  cause${cause.code ? ` (${cause.code})` : ''}: ${strip(cause.message).replace(/"[^"]*"/g, '"[redacted]"')}`);
  if (error.stack) lines.push(...error.stack.split('\n').filter((line) => line.startsWith('    at ')).slice(0, 8));
  return lines.join('\n');
}

export function errorResponse(error: unknown): Response {
  if (error instanceof ApiError) {
    return NextResponse.json(
      { error: { code: error.code, message: error.message, issues: error.issues, ...error.extra } },
      { status: error.status, headers: error.headers },
    );
  }
  if (error instanceof ZodError) {
    const issues = zodIssues(error);
    const first = issues[0];
    const message = first ? `Invalid request: ${first.path ? `${first.path}: ` : ''}${first.message}` : 'Invalid request.';
    return NextResponse.json(errorBody('invalid_request', message, issues), { status: 400 });
  }
  // Anything else is our bug: log it (without the query's parameters, which hold patient data), tell the caller nothing internal.
  console.error('[benchwire] unhandled error in route handler', redactedError(error));
  return NextResponse.json(errorBody('internal', 'Something went wrong on the server. It has been logged.'), {
    status: 500,
  });
}

const SAFE_METHODS = new Set(['GET', 'HEAD', 'OPTIONS']);

/** The one media type the API accepts (RFC 8259 §11); a charset parameter is allowed only as UTF-8. */
function isExactlyJson(type: string): boolean {
  const [essence, ...parameters] = type.split(';').map((part) => part.trim().toLowerCase());
  if (essence !== 'application/json') return false;
  return parameters.every((p) => p === '' || p === 'charset=utf-8' || p === 'charset="utf-8"');
}

/**
 * Refuses what a browser on another site could make someone's session do: a state-changing request from
 * another origin (403), or with a body that is not exactly application/json (415; a form or text/plain
 * post needs no preflight, JSON does).
 */
export function checkStateChangingRequest(request: Request, options: RouteOptions = {}): void {
  if (SAFE_METHODS.has(request.method.toUpperCase())) return;
  const reason = crossSiteReason(request.headers, request.url);
  if (reason) throw new ApiError(403, 'cross_site_request', `Refused: ${reason}. Use Benchwire from its own address.`);
  // Without a Content-Type there is nothing a route will read (readJson requires the type too).
  const type = request.headers.get('content-type');
  // A file upload route takes multipart/form-data; the origin check above is what guards it.
  if (type !== null && options.upload && type.toLowerCase().startsWith('multipart/form-data')) return;
  if (type !== null && !isExactlyJson(type)) {
    throw new ApiError(415, 'unsupported_media_type', 'Send the body as JSON (Content-Type: application/json).');
  }
}

/** Wraps a route handler so every failure becomes a JSON error with the right status. */
export interface RouteOptions {
  /** The route takes a file as multipart/form-data (same-origin only, like every write). */
  upload?: boolean;
}

export function apiRoute<Ctx = unknown>(handler: (request: Request, context: Ctx) => Promise<Response>, options: RouteOptions = {}) {
  return async (request: Request, context: Ctx): Promise<Response> => {
    const started = performance.now();
    let response: Response;
    try {
      checkStateChangingRequest(request, options);
      response = await handler(request, context);
    } catch (error) {
      response = errorResponse(error);
    }
    // API answers hold patient data: never kept by a browser or a proxy (RFC 9111 §5.2.2.5).
    if (!response.headers.has('cache-control')) response.headers.set('cache-control', 'no-store');
    // W3C Server Timing: how long the handler took, so a slow answer can be told from a slow network.
    response.headers.set('server-timing', `handler;dur=${(performance.now() - started).toFixed(1)}`);
    return response;
  };
}

/** Body limits per kind of route: small where no one is signed in yet, the batch size for bridges. */
export const BODY_LIMITS = {
  /** Sign-in, set-up: a few short fields. */
  small: 16 * 1024,
  /** Most forms and API calls. */
  standard: 256 * 1024,
  /** A printout profile preview carries a pasted printout of up to 256 KB. */
  large: 1024 * 1024,
  /** A bridge batch (the bridge sends at most 1 MB; one record may hold 64 KB of escaped raw text). */
  bridge: 2 * 1024 * 1024,
} as const;

const tooLarge = (limit: number) =>
  new ApiError(413, 'payload_too_large', `The body is larger than ${limit} bytes.`, [], { limit });

/** Reads the body while it streams in; stops and answers 413 as soon as it passes the limit (never buffers more). */
export async function readBodyText(request: Request, limit: number): Promise<string> {
  const length = request.headers.get('content-length');
  if (length !== null && Number(length) > limit) {
    await request.body?.cancel().catch(() => {});
    throw tooLarge(limit);
  }
  if (!request.body) return '';
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let total = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    total += value.byteLength;
    if (total > limit) {
      await reader.cancel().catch(() => {});
      throw tooLarge(limit);
    }
    chunks.push(value);
  }
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(Buffer.concat(chunks));
  } catch {
    throw new ApiError(400, 'invalid_json', 'The body is not valid UTF-8.');
  }
}

export interface ReadJsonOptions {
  /** Bytes accepted (default BODY_LIMITS.standard). */
  limit?: number;
  /**
   * 'strict' (default): any string holding NUL, a lone surrogate or a control character is a 400 naming
   * its field. 'instrument': bytes from an analyzer or a pasted printout, kept as they are (the route
   * makes them storable).
   */
  text?: 'strict' | 'instrument';
}

function rejectBadText(value: unknown, where: 'body' | 'query'): void {
  const problem = findTextProblem(value);
  if (!problem) return;
  const field = problem.path || where;
  throw new ApiError(400, 'invalid_text', `Invalid request: ${field}: ${problem.message}`, [{ path: problem.path, message: problem.message }]);
}

/** Reads a JSON body and validates it; malformed JSON, wrong type or size are 4xx, never 500. */
export async function readJson<S extends z.ZodType>(request: Request, schema: S, options: ReadJsonOptions = {}): Promise<z.infer<S>> {
  if (!isExactlyJson(request.headers.get('content-type') ?? '')) {
    throw new ApiError(415, 'unsupported_media_type', 'Send the body as JSON (Content-Type: application/json).');
  }
  const text = await readBodyText(request, options.limit ?? BODY_LIMITS.standard);
  let body: unknown;
  try {
    body = JSON.parse(text);
  } catch {
    throw new ApiError(400, 'invalid_json', 'The body is not valid JSON.');
  }
  if (options.text === 'instrument') body = withWellFormedText(body);
  else rejectBadText(body, 'body');
  // parseAsync: some schemas check with an engine they import only when needed (the QC pattern).
  return schema.parseAsync(body);
}

/** Validates query parameters with a zod object schema. */
export function readQuery<S extends z.ZodType>(request: Request, schema: S): z.infer<S> {
  const params = Object.fromEntries(new URL(request.url).searchParams);
  rejectBadText(params, 'query');
  return schema.parse(params);
}

export const json = (data: unknown, init?: ResponseInit) => NextResponse.json(data, init);
