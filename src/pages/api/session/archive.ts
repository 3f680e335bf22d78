import { z } from 'zod';
import { requireUser } from '../../../lib/server/access.ts';
import { readFormBody, readJsonBody } from '../../../lib/server/body-limits.ts';
import { NotFound } from '../../../lib/server/errors.ts';
import { apiRoute, json, parseInput } from '../../../lib/server/http.ts';
import { ARCHIVE_COOKIE } from '../../../lib/server/access.ts';

const schema = z.object({ slug: z.string().min(1).max(80) });

/** Switches the archive the signed-in user works in (a form post or JSON). */
export const POST = apiRoute(async ({ locals, request, cookies, redirect }) => {
  requireUser(locals);
  const isForm = (request.headers.get('content-type') ?? '').includes('form');
  const raw = isForm ? await readFormBody(request) : await readJsonBody(request);
  const { slug } = parseInput(schema, raw);
  if (!locals.memberships.some((m) => m.slug === slug)) throw new NotFound('That archive');
  cookies.set(ARCHIVE_COOKIE, slug, { path: '/', httpOnly: true, sameSite: 'lax', secure: request.url.startsWith('https:'), maxAge: 365 * 86400 });
  return isForm ? redirect('/', 303) : json({ slug });
});
