import type { APIContext, APIRoute } from 'astro';
import { ZodError, type ZodType, type z } from 'zod';
import { readJsonBody } from './body-limits.ts';
import { AppError, InvalidInput, TooManyRequests } from './errors.ts';
// Loaded with the middleware, so that it notes every request's response from the first on.
export { pacedBody } from './paced-body.ts';

/** A JSON response with the given status (and optional extra headers). */
export function json(body: unknown, status = 200, headers: Record<string, string> = {}): Response {
  return new Response(JSON.stringify(body), {
    status,
    headers: { 'content-type': 'application/json; charset=utf-8', ...headers },
  });
}

/** The one JSON error shape of the API; `retryAfterSeconds` for a 429 (a minute unless said). */
export function errorResponse(status: number, code: string, message: string, fields?: Record<string, string>, retryAfterSeconds = 60): Response {
  const headers: Record<string, string> = {};
  if (status === 429) headers['retry-after'] = String(retryAfterSeconds);
  if (status === 503) headers['retry-after'] = String(OUTAGE_RETRY_SECONDS);
  return json({ error: { code, message, ...(fields ? { fields } : {}) } }, status, headers);
}

/** How long a client is asked to wait while the database cannot be reached (it reconnects by itself). */
const OUTAGE_RETRY_SECONDS = 5;
const CONNECTION_LOST = /ECONNREFUSED|ECONNRESET|ETIMEDOUT|EHOSTUNREACH|57P0[123]|terminating connection|Connection terminated|the database system is (starting up|shutting down)|timeout exceeded when trying to connect/i;

/** True for an error that says the database cannot be reached just now (a restart, an outage), not a bug. */
export function isDatabaseOutage(err: unknown): boolean {
  const e = err as { name?: string; message?: string; code?: string; parent?: { code?: string; message?: string } } | null;
  if (!e) return false;
  if (/^Sequelize(Connection\w*|HostNotReachable|HostNotFound|InvalidConnection|AccessDenied)Error$/.test(e.name ?? '')) return true;
  return CONNECTION_LOST.test(`${e.message ?? ''} ${e.code ?? ''} ${e.parent?.code ?? ''} ${e.parent?.message ?? ''}`);
}

/** The answer while the database cannot be reached: 503 in the one JSON shape, with Retry-After. */
export function outageResponse(): Response {
  return errorResponse(503, 'database_unavailable', `The database cannot be reached just now; nothing was changed. Try again in ${OUTAGE_RETRY_SECONDS} seconds.`);
}

/** Turns a zod error into field messages keyed by dotted path. */
export function zodFields(err: ZodError): Record<string, string> {
  const fields: Record<string, string> = {};
  for (const issue of err.issues) fields[issue.path.join('.') || '_'] ??= issue.message;
  return fields;
}

/** Parses `value` with `schema`, throwing InvalidInput with per-field messages. */
export function parseInput<S extends ZodType>(schema: S, value: unknown): z.infer<S> {
  const result = schema.safeParse(value);
  if (!result.success) throw new InvalidInput('Some fields need attention.', zodFields(result.error));
  return result.data;
}

/** Reads a JSON body of at most 1 MiB (413 past it, never buffered), refusing anything that is not JSON with a clear 400. */
export function readJson(request: Request): Promise<unknown> {
  return readJsonBody(request);
}

/**
 * Wraps an endpoint: typed errors become their status and JSON shape, a database outage a 503
 * with Retry-After, anything else is logged with the request id and answered as a plain 500
 * without a stack.
 */
export function apiRoute(handler: (ctx: APIContext) => Promise<Response> | Response): APIRoute {
  return async (ctx) => {
    try {
      return await handler(ctx);
    } catch (err) {
      if (err instanceof AppError) return errorResponse(err.status, err.code, err.message, err.fields, err instanceof TooManyRequests ? err.retryAfterSeconds : undefined);
      if (err instanceof ZodError) return errorResponse(400, 'invalid_input', 'Some fields need attention.', zodFields(err));
      const requestId = ctx.locals.requestId;
      if (isDatabaseOutage(err)) {
        console.error(`[${requestId}] ${ctx.request.method} ${new URL(ctx.request.url).pathname}: the database cannot be reached (${(err as Error).message})`);
        return outageResponse();
      }
      console.error(`[${requestId}] ${ctx.request.method} ${new URL(ctx.request.url).pathname} failed:`, err);
      return errorResponse(500, 'internal', `Something went wrong on our side (request ${requestId}). Nothing was lost; try again.`);
    }
  };
}

/**
 * What a page loads, or the refusal it shows instead: a typed error (404 for another archive's
 * print, 403 for a lower role…) becomes the page's status and its message; anything else is thrown.
 */
export async function loadForPage<T>(response: { status?: number }, load: () => Promise<T>): Promise<{ data: T; problem: null } | { data: null; problem: AppError }> {
  try {
    return { data: await load(), problem: null };
  } catch (err) {
    if (!(err instanceof AppError)) throw err;
    response.status = err.status;
    return { data: null, problem: err };
  }
}
