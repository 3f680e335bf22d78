import { revokeSession } from '../../../lib/server/auth.ts';
import { apiRoute } from '../../../lib/server/http.ts';

const SESSION_COOKIES = ['authjs.session-token', '__Secure-authjs.session-token', 'authjs.csrf-token', '__Host-authjs.csrf-token', 'authjs.callback-url', '__Secure-authjs.callback-url'];

/** Signs out: the session is revoked on the server (a copy of the cookie stops working too), then its cookies are removed. */
export const POST = apiRoute(async ({ cookies, redirect, request }) => {
  await revokeSession(request);
  for (const name of SESSION_COOKIES) cookies.delete(name, { path: '/', secure: name.startsWith('__') });
  const wantsJson = (request.headers.get('accept') ?? '').includes('application/json');
  return wantsJson ? new Response(null, { status: 204 }) : redirect('/signin?signedout=1', 303);
});
