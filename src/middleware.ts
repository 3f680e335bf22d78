import { randomUUID } from 'node:crypto';
import { defineMiddleware } from 'astro:middleware';
import type { MiddlewareHandler } from 'astro';
import { ARCHIVE_COOKIE } from './lib/server/access.ts';
import { userForToken } from './lib/server/api-tokens.ts';
import { sessionUser } from './lib/server/auth.ts';
import { refuseDeclaredOversize } from './lib/server/body-limits.ts';
import { config } from './lib/server/config.ts';
import { CONTENT_SECURITY_POLICY } from './lib/server/content-policy.ts';
import { errorResponse, isDatabaseOutage, outageResponse } from './lib/server/http.ts';
import { openDatabase } from './lib/server/database.ts';
import { membershipsFor } from './lib/server/members.ts';

// The web server's database, opened with its settings once, when the server loads its middleware.
openDatabase();

/** Pages anyone may open; everything else under / needs a signed-in user. */
const PUBLIC_PAGES = [/^\/signin\/?$/, /^\/invite\/[^/]+\/?$/, /^\/outbox(\/.*)?$/, /^\/help(\/.*)?$/];
const STATE_CHANGING = new Set(['POST', 'PUT', 'PATCH', 'DELETE']);

const SECURITY_HEADERS: Record<string, string> = {
  'content-security-policy': CONTENT_SECURITY_POLICY,
  'x-content-type-options': 'nosniff',
  'x-frame-options': 'DENY',
  'referrer-policy': 'same-origin',
  'permissions-policy': 'camera=(), microphone=(), geolocation=()',
};

function withHeaders(res: Response, requestId: string): Response {
  // Some responses (redirects from fetch, streamed files) have immutable headers: copy when needed.
  let out = res;
  try {
    res.headers.set('x-request-id', requestId);
  } catch {
    out = new Response(res.body, res);
    out.headers.set('x-request-id', requestId);
  }
  for (const [k, v] of Object.entries(SECURITY_HEADERS)) if (!out.headers.has(k)) out.headers.set(k, v);
  if (config().production) out.headers.set('strict-transport-security', 'max-age=31536000');
  // A body refused as too large is not read any further: the connection closes instead.
  if (out.status === 413) out.headers.set('connection', 'close');
  return out;
}

/**
 * Where a state-changing request came from: its Origin, else the origin of its Referer. Our own
 * pages always send one of them; a Referer that is not a URL is a malformed request.
 */
function requestOrigin(request: Request): { origin: string | null } | 'malformed' {
  const origin = request.headers.get('origin');
  if (origin) return { origin };
  const referer = request.headers.get('referer');
  if (!referer) return { origin: null };
  try {
    return { origin: new URL(referer).origin };
  } catch {
    return 'malformed';
  }
}

const handleRequest = async (...[ctx, next]: Parameters<MiddlewareHandler>): Promise<Response> => {
  const { request, locals, url } = ctx;
  const requestId = request.headers.get('x-request-id')?.slice(0, 40) || randomUUID().slice(0, 8);
  locals.requestId = requestId;
  locals.user = null;
  locals.authVia = null;
  locals.memberships = [];
  locals.membership = null;
  const path = url.pathname;
  const isApi = path.startsWith('/api/');

  // Before anyone is looked up or a byte of the body is read.
  const oversize = refuseDeclaredOversize(request, path);
  if (oversize) return withHeaders(errorResponse(oversize.status, oversize.code, oversize.message), requestId);

  const authz = request.headers.get('authorization');
  const bearer = authz?.toLowerCase().startsWith('bearer ') ? authz.slice(7).trim() : null;

  // Cross-site requests that change state are refused unless they carry an API token (a browser
  // never adds one by itself). This is the only such check: Astro's own is off (astro.config.mjs),
  // as it refused token calls without a JSON content type, in plain text.
  if (!bearer && STATE_CHANGING.has(request.method)) {
    const from = requestOrigin(request);
    if (from === 'malformed') return withHeaders(errorResponse(400, 'invalid_input', 'The Referer header is not a URL.'), requestId);
    if (from.origin !== url.origin && from.origin !== new URL(config().appUrl).origin) {
      return withHeaders(errorResponse(403, 'cross_site', 'This request did not come from a Drawerlight page.'), requestId);
    }
  }

  if (path.startsWith('/api/auth/')) return withHeaders(await next(), requestId);

  if (bearer) {
    const found = await userForToken(bearer);
    if (!found) return withHeaders(errorResponse(401, 'bad_token', 'That API token is unknown or has been revoked.'), requestId);
    locals.user = { id: found.user.id, email: found.user.email, name: found.user.name };
    locals.authVia = 'token';
  } else {
    locals.user = await sessionUser(request);
    if (locals.user) locals.authVia = 'session';
  }

  if (locals.user) {
    locals.memberships = await membershipsFor(locals.user.id);
    const named = request.headers.get('x-archive');
    if (named !== null) {
      // An archive named explicitly is that archive or nothing: falling back would act on another one.
      locals.membership = locals.memberships.find((m) => m.slug === named) ?? null;
      if (!locals.membership) return withHeaders(errorResponse(404, 'not_found', 'The archive named in X-Archive was not found among yours.'), requestId);
    } else {
      const chosen = ctx.cookies.get(ARCHIVE_COOKIE)?.value;
      locals.membership = locals.memberships.find((m) => m.slug === chosen) ?? locals.memberships[0] ?? null;
    }
  } else if (!isApi && !PUBLIC_PAGES.some((re) => re.test(path))) {
    return withHeaders(ctx.redirect(`/signin?next=${encodeURIComponent(path + url.search)}`, 303), requestId);
  }

  const res = await next();
  // A path under /api/ that no route answers gets the API's JSON error, not the HTML page for people.
  if (isApi && res.status === 404 && /text\/html/i.test(res.headers.get('content-type') ?? '')) {
    await res.body?.cancel().catch(() => undefined);
    return withHeaders(errorResponse(404, 'not_found', `There is no ${request.method} ${path} in the API.`), requestId);
  }
  return withHeaders(res, requestId);
};

const OUTAGE_PAGE = '<!doctype html><html lang="en"><meta charset="utf-8"><title>Drawerlight: back in a moment</title><p>The database cannot be reached just now; nothing was changed. Reload the page in a few seconds.</p></html>';

/**
 * While the database cannot be reached (a restart, an outage), every route answers 503 with
 * Retry-After and the security headers, in the API's JSON error shape or as a short page,
 * instead of the framework's empty 500.
 */
export const onRequest = defineMiddleware(async (ctx, next) => {
  try {
    return await handleRequest(ctx, next);
  } catch (err) {
    if (!isDatabaseOutage(err)) throw err;
    const requestId = ctx.locals.requestId ?? randomUUID().slice(0, 8);
    console.error(`[${requestId}] ${ctx.request.method} ${ctx.url.pathname}: the database cannot be reached (${(err as Error).message})`);
    const page = () => new Response(OUTAGE_PAGE, { status: 503, headers: { 'content-type': 'text/html; charset=utf-8', 'retry-after': outageResponse().headers.get('retry-after')! } });
    return withHeaders(ctx.url.pathname.startsWith('/api/') ? outageResponse() : page(), requestId);
  }
});
