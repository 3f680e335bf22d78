import type { APIRoute } from 'astro';
import { handleAuth } from '../../../lib/server/auth.ts';
import { FORM_BODY_LIMIT, readCappedBody } from '../../../lib/server/body-limits.ts';
import { apiRoute } from '../../../lib/server/http.ts';
import { recordSigninFailure, signinRefusal } from '../../../lib/server/signin-guard.ts';

const PASSWORD_SIGNIN = /\/callback\/credentials\/?$/;
const LINK_REQUEST = /\/signin\/nodemailer\/?$/;

function emailIn(body: Uint8Array, contentType: string): string {
  const text = new TextDecoder().decode(body);
  let email: unknown = '';
  if (contentType.includes('json')) {
    try {
      email = (JSON.parse(text) as { email?: unknown })?.email;
    } catch {
      /* Auth.js answers a body it cannot read */
    }
  } else email = new URLSearchParams(text).get('email');
  return String(email ?? '').trim().toLowerCase().slice(0, 320);
}

const signedIn = (res: Response) => res.headers.getSetCookie().some((c) => /session-token=[^;]/.test(c));

/**
 * Auth.js: sign-in with e-mail and password or a one-time e-mail link, sign-out, session. A body is
 * read up to the small form limit (413 past it) before Auth.js sees it; password sign-ins and link
 * requests are refused once the caller's address used up its attempts (src/lib/server/signin-guard.ts).
 */
export const ALL: APIRoute = apiRoute(async ({ request, clientAddress, redirect }) => {
  if (request.method === 'GET' || request.method === 'HEAD') return handleAuth(request);
  const body = await readCappedBody(request, FORM_BODY_LIMIT);
  const replay = new Request(request.url, { method: request.method, headers: request.headers, body });
  const path = new URL(request.url).pathname;
  const password = PASSWORD_SIGNIN.test(path);
  if (!password && !LINK_REQUEST.test(path)) return handleAuth(replay);

  const address = clientAddress ?? 'unknown';
  const email = emailIn(body, request.headers.get('content-type') ?? '');
  const refusal = await signinRefusal(address, email);
  if (refusal) {
    // the sign-in form gets its page back with the reason; a script gets the 429
    if ((request.headers.get('accept') ?? '').includes('text/html')) return redirect('/signin?error=TooMany', 303);
    throw refusal;
  }
  const res = await handleAuth(replay);
  // Only failures count (a family member signing in often is not an attack); every link request
  // counts, as each one sends an e-mail and its outcome is not known here.
  if (!password || !signedIn(res)) await recordSigninFailure(address, email);
  return res;
});
