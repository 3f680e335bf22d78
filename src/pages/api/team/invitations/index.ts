import { requireCurrentArchive } from '../../../../lib/server/access.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { invite, inviteSchema } from '../../../../lib/server/team.ts';

/** Invites someone to the current archive by e-mail (owners only). */
export const POST = apiRoute(async ({ locals, request }) => {
  const m = requireCurrentArchive(locals, 'owner');
  const input = parseInput(inviteSchema, await readJson(request));
  const created = await invite(m.archiveId, input, { userId: locals.user!.id, requestId: locals.requestId });
  return json(created, 201, { location: `/api/team/invitations/${created.id}` });
});
