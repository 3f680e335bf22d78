import { idParam, requireCurrentArchive } from '../../../../lib/server/access.ts';
import { apiRoute } from '../../../../lib/server/http.ts';
import { revokeInvitation } from '../../../../lib/server/team.ts';

/** Withdraws an open invitation (owners only). */
export const DELETE = apiRoute(async ({ locals, params }) => {
  const m = requireCurrentArchive(locals, 'owner');
  await revokeInvitation(m.archiveId, idParam(params.id, 'That invitation'), { userId: locals.user!.id, requestId: locals.requestId });
  return new Response(null, { status: 204 });
});
