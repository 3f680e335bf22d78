import { z } from 'zod';
import { signInCookies } from '../../../lib/server/auth.ts';
import { apiRoute, json, readJson } from '../../../lib/server/http.ts';
import { ARCHIVE_COOKIE } from '../../../lib/server/access.ts';
import { acceptInvitation } from '../../../lib/server/team.ts';

const body = z.object({ name: z.string().optional(), password: z.string().optional() });

/** Accepts an invitation: creates the account when needed, joins the archive, signs in. */
export const POST = apiRoute(async ({ params, request, locals, cookies }) => {
  const input = body.parse(await readJson(request));
  const { user, archiveSlug } = await acceptInvitation(params.token ?? '', input, locals.user?.id ?? null);
  const res = json({ archive: archiveSlug, redirect: '/' });
  if (!locals.user && input.password) for (const c of await signInCookies(request, user.email, input.password)) res.headers.append('set-cookie', c);
  cookies.set(ARCHIVE_COOKIE, archiveSlug, { path: '/', httpOnly: true, sameSite: 'lax', secure: request.url.startsWith('https:'), maxAge: 365 * 86400 });
  return res;
});
