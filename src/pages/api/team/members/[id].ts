import { idParam, requireCurrentArchive } from '../../../../lib/server/access.ts';
import { apiRoute, json, parseInput, readJson } from '../../../../lib/server/http.ts';
import { changeRole, removeMember, requireMember, roleChangeSchema } from '../../../../lib/server/team.ts';

/** Changes a member's role (owners only; the last owner stays an owner). */
export const PATCH = apiRoute(async ({ locals, params, request }) => {
  const m = requireCurrentArchive(locals, 'owner');
  const id = idParam(params.id, 'That member');
  await requireMember(m.archiveId, id);
  const { role } = parseInput(roleChangeSchema, await readJson(request));
  return json(await changeRole(m.archiveId, id, role, { userId: locals.user!.id, requestId: locals.requestId }));
});

/** Removes a member from the archive (owners only; never the last owner). */
export const DELETE = apiRoute(async ({ locals, params }) => {
  const m = requireCurrentArchive(locals, 'owner');
  await removeMember(m.archiveId, idParam(params.id, 'That member'), { userId: locals.user!.id, requestId: locals.requestId });
  return new Response(null, { status: 204 });
});
