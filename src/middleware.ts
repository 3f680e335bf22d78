import { createHash, randomUUID } from 'node:crypto';
import { defineMiddleware } from 'astro:middleware';
import { User } from '../db/index.ts';
import { ARCHIVE_COOKIE } from './lib/server/access.ts';
import { userForToken } from './lib/server/api-tokens.ts';
import { sessionUserId } from './lib/server/auth.ts';
import { config } from './lib/server/config.ts';
import { errorResponse } from './lib/server/http.ts';
import { membershipsFor } from './lib/server/members.ts';
import { RateLimiter } from './lib/server/rate-limit.ts';
import { TooManyRequests } from './lib/server/errors.ts';


/** Pages anyone may open; everything else under / needs a signed-in user. */
const PUBLIC_PAGES = [/^\/signin\/?$/, /^\/invite\/[^/]+\/?$/, /^\/outbox(\/.*)?$/, /^\/help(\/.*)?$/];
const STATE_CHANGING = new Set(['POST', 'PUT', 'PATCH', 'DELETE']);

// Per address and account, so one family member's typos never lock out another; plus a looser
// per-address ceiling against someone trying many accounts.
const signinPerAccount = new RateLimiter(config().signinAttemptsPer15Min, 15 * 60 * 1000);
const signinPerAddress = new RateLimiter(config().signinAttemptsPer15Min * 50, 15 * 60 * 1000);

async function signinEmail(request: Request): Promise<string> {
  try {
    const form = await request.clone().formData();
    return String(form.get('email') ?? '').trim().toLowerCase().slice(0, 320);
  } catch {
    return '';
  }
}

/**
 * The content security policy. Scripts: our own files, plus the inline scripts of the page itself
 * (Astro's island loader), each allowed by its SHA-256 — never any other inline script. Styles
 * keep 'unsafe-inline' for the style attributes React renders.
 */
function contentSecurityPolicy(scriptHashes: string[] = []): string {
  const scripts = ["'self'", ...scriptHashes].join(' ');
  return `default-src 'self'; script-src ${scripts}; style-src 'self' 'unsafe-inline'; img-src 'self' data: blob:; font-src 'self'; connect-src 'self'; object-src 'none'; base-uri 'self'; form-action 'self'; frame-ancestors 'none'`;
}

const INLINE_SCRIPT = /<script\b(?![^>]*\bsrc=)[^>]*>([\s\S]*?)<\/script>/gi;

/** Allows exactly the inline scripts of an HTML page by their hashes (CSP level 2). */
async function hashInlineScripts(res: Response): Promise<void> {
  if (!(res.headers.get('content-type') ?? '').includes('text/html') || !res.body) return;
  const html = await res.clone().text();
  const hashes = new Set<string>();
  for (const m of html.matchAll(INLINE_SCRIPT)) hashes.add(`'sha256-${createHash('sha256').update(m[1], 'utf8').digest('base64')}'`);
  res.headers.set('content-security-policy', contentSecurityPolicy([...hashes]));
}

const SECURITY_HEADERS: Record<string, string> = {
  'content-security-policy': contentSecurityPolicy(),
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
  return out;
}

function clientKey(request: Request, clientAddress: string | undefined): string {
  return clientAddress ?? request.headers.get('x-forwarded-for') ?? 'local';
}

/** Cookie-authenticated requests that change state must come from our own pages (CSRF). */
function sameOrigin(request: Request): boolean {
  const origin = request.headers.get('origin') ?? (request.headers.get('referer') ? new URL(request.headers.get('referer')!).origin : null);
  if (!origin) return false;
  return origin === new URL(request.url).origin || origin === new URL(config().appUrl).origin;
}

export const onRequest = defineMiddleware(async (ctx, next) => {
  const { request, locals, url } = ctx;
  const requestId = request.headers.get('x-request-id')?.slice(0, 40) || randomUUID().slice(0, 8);
  locals.requestId = requestId;
  locals.user = null;
  locals.authVia = null;
  locals.memberships = [];
  locals.membership = null;
  const path = url.pathname;
  const isApi = path.startsWith('/api/');

  let clientAddress: string | undefined;
  try {
    clientAddress = ctx.clientAddress;
  } catch {
    clientAddress = undefined;
  }

  if (path.startsWith('/api/auth/')) {
    if (request.method === 'POST' && (path.endsWith('/callback/credentials') || path.endsWith('/signin/nodemailer'))) {
      try {
        const address = clientKey(request, clientAddress);
        signinPerAddress.hit(address);
        signinPerAccount.hit(`${address} ${await signinEmail(request)}`);
      } catch (err) {
        if (err instanceof TooManyRequests) {
          const accept = request.headers.get('accept') ?? '';
          if (accept.includes('text/html')) return withHeaders(ctx.redirect('/signin?error=TooMany', 303), requestId);
          return withHeaders(errorResponse(429, err.code, err.message), requestId);
        }
        throw err;
      }
    }
    return withHeaders(await next(), requestId);
  }

  const authz = request.headers.get('authorization');
  if (authz?.toLowerCase().startsWith('bearer ')) {
    const found = await userForToken(authz.slice(7).trim());
    if (!found) return withHeaders(errorResponse(401, 'bad_token', 'That API token is unknown or has been revoked.'), requestId);
    locals.user = { id: found.user.id, email: found.user.email, name: found.user.name };
    locals.authVia = 'token';
  } else {
    const userId = await sessionUserId(request);
    const user = userId ? await User.findByPk(userId) : null;
    if (user) {
      locals.user = { id: user.id, email: user.email, name: user.name };
      locals.authVia = 'session';
    }
  }

  if (locals.authVia !== 'token' && STATE_CHANGING.has(request.method) && !sameOrigin(request)) {
    return withHeaders(errorResponse(403, 'cross_site', 'This request did not come from a Drawerlight page.'), requestId);
  }

  if (locals.user) {
    locals.memberships = await membershipsFor(locals.user.id);
    const wanted = request.headers.get('x-archive') ?? ctx.cookies.get(ARCHIVE_COOKIE)?.value;
    locals.membership = locals.memberships.find((m) => m.slug === wanted) ?? locals.memberships[0] ?? null;
  } else if (!isApi && !PUBLIC_PAGES.some((re) => re.test(path))) {
    return withHeaders(ctx.redirect(`/signin?next=${encodeURIComponent(path + url.search)}`, 303), requestId);
  }

  const res = await next();
  await hashInlineScripts(res).catch(() => undefined);
  return withHeaders(res, requestId);
});
