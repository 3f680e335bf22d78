import { AUTH_BASE_PATH, handleAuth } from './auth.ts';

/**
 * A CSRF token for the sign-in forms, fetched from Auth.js on the server so the page works
 * without scripts; the matching cookie is passed on to the browser.
 */
export async function csrfForForm(request: Request): Promise<{ csrfToken: string; setCookies: string[] }> {
  const url = new URL(`${AUTH_BASE_PATH}/csrf`, request.url);
  const res = await handleAuth(new Request(url, { headers: { cookie: request.headers.get('cookie') ?? '' } }));
  const { csrfToken } = (await res.json()) as { csrfToken: string };
  return { csrfToken, setCookies: res.headers.getSetCookie() };
}

/** Plain-words messages for the codes Auth.js and our middleware put in `?error=`. */
export const SIGNIN_ERRORS: Record<string, string> = {
  CredentialsSignin: 'That e-mail and password do not match an account. Check both and try again.',
  TooMany: 'Too many sign-in attempts from here. Wait a few minutes, then try again.',
  Verification: 'That sign-in link has expired or was used already. Ask for a new one below.',
  AccessDenied: 'That account cannot sign in here.',
  Configuration: 'Sign-in is not working on the server right now. Try again later.',
};

const CONTROL_CHARACTERS = /[\u0000-\u001f\u007f]/;

/** True when a destination holds control characters (CR/LF would split the Location header): a 400. */
export function malformedNext(next: string | null): boolean {
  return next !== null && CONTROL_CHARACTERS.test(next);
}

/**
 * Only a path of this site may be a destination after sign-in; anything else goes to `/`.
 * Browsers read `\` as `/`, so `/\evil.example` is another site (`//evil.example`): refused,
 * as is anything that resolves to another origin.
 */
export function safeNext(next: string | null): string {
  if (!next || !next.startsWith('/') || next.startsWith('//') || next.includes('\\') || CONTROL_CHARACTERS.test(next)) return '/';
  const base = new URL('http://drawerlight.invalid');
  const resolved = new URL(next, base);
  return resolved.origin === base.origin ? `${resolved.pathname}${resolved.search}${resolved.hash}` : '/';
}
