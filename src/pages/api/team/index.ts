import { requireCurrentArchive } from '../../../lib/server/access.ts';
import { apiRoute, json } from '../../../lib/server/http.ts';
import { listTeam } from '../../../lib/server/team.ts';

/** The current archive's members and open invitations (owners only). */
export const GET = apiRoute(async ({ locals }) => {
  const m = requireCurrentArchive(locals, 'owner');
  return json(await listTeam(m.archiveId));
});
