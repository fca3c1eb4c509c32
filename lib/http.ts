import 'server-only';
import { NextResponse } from 'next/server';
import { ZodError, type z } from 'zod';

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
  // Anything else is our bug: log it whole, tell the caller nothing internal.
  console.error('[benchwire] unhandled error in route handler', error);
  return NextResponse.json(errorBody('internal', 'Something went wrong on the server. It has been logged.'), {
    status: 500,
  });
}

/** Wraps a route handler so every failure becomes a JSON error with the right status. */
export function apiRoute<Ctx = unknown>(handler: (request: Request, context: Ctx) => Promise<Response>) {
  return async (request: Request, context: Ctx): Promise<Response> => {
    try {
      return await handler(request, context);
    } catch (error) {
      return errorResponse(error);
    }
  };
}

const MAX_BODY_BYTES = 2 * 1024 * 1024;

/** Reads a JSON body and validates it; malformed JSON, wrong type or size are 4xx, never 500. */
export async function readJson<S extends z.ZodType>(request: Request, schema: S): Promise<z.infer<S>> {
  const type = request.headers.get('content-type') ?? '';
  if (!type.toLowerCase().includes('application/json')) {
    throw new ApiError(415, 'unsupported_media_type', 'Send the body as JSON (Content-Type: application/json).');
  }
  const text = await request.text();
  if (Buffer.byteLength(text) > MAX_BODY_BYTES) {
    throw new ApiError(413, 'payload_too_large', `The body is larger than ${MAX_BODY_BYTES} bytes.`);
  }
  let body: unknown;
  try {
    body = JSON.parse(text);
  } catch {
    throw new ApiError(400, 'invalid_json', 'The body is not valid JSON.');
  }
  return schema.parse(body);
}

/** Validates query parameters with a zod object schema. */
export function readQuery<S extends z.ZodType>(request: Request, schema: S): z.infer<S> {
  const params = Object.fromEntries(new URL(request.url).searchParams);
  return schema.parse(params);
}

export const json = (data: unknown, init?: ResponseInit) => NextResponse.json(data, init);
