import { requireUser } from '../../lib/server/access.ts';
import { apiRoute, json } from '../../lib/server/http.ts';

/** Who the caller is and which archives they belong to (handy for scripts holding a token). */
export const GET = apiRoute(({ locals }) => {
  const user = requireUser(locals);
  return json({ user, archives: locals.memberships, current: locals.membership?.slug ?? null });
});
