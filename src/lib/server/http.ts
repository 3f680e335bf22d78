import type { APIContext, APIRoute } from 'astro';
import { ZodError, type ZodType, type z } from 'zod';
import { readJsonBody } from './body-limits.ts';
import { AppError, InvalidInput } from './errors.ts';

/** A JSON response with the given status (and optional extra headers). */
export function json(body: unknown, status = 200, headers: Record<string, string> = {}): Response {
  return new Response(JSON.stringify(body), {
    status,
    headers: { 'content-type': 'application/json; charset=utf-8', ...headers },
  });
}

/** The one JSON error shape of the API. */
export function errorResponse(status: number, code: string, message: string, fields?: Record<string, string>): Response {
  const headers: Record<string, string> = {};
  if (status === 429) headers['retry-after'] = '60';
  return json({ error: { code, message, ...(fields ? { fields } : {}) } }, status, headers);
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
 * Wraps an endpoint: typed errors become their status and JSON shape, anything else is
 * logged with the request id and answered as a plain 500 without a stack.
 */
export function apiRoute(handler: (ctx: APIContext) => Promise<Response> | Response): APIRoute {
  return async (ctx) => {
    try {
      return await handler(ctx);
    } catch (err) {
      if (err instanceof AppError) return errorResponse(err.status, err.code, err.message, err.fields);
      if (err instanceof ZodError) return errorResponse(400, 'invalid_input', 'Some fields need attention.', zodFields(err));
      const requestId = ctx.locals.requestId;
      console.error(`[${requestId}] ${ctx.request.method} ${new URL(ctx.request.url).pathname} failed:`, err);
      return errorResponse(500, 'internal', `Something went wrong on our side (request ${requestId}). Nothing was lost; try again.`);
    }
  };
}
