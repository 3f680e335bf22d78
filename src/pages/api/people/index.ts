import { requireCurrentArchive } from '../../../lib/server/access.ts';
import { findPeople } from '../../../lib/server/captions.ts';
import { apiRoute, json } from '../../../lib/server/http.ts';

/** People tagged in the current archive, most-tagged first; `?q=` narrows by the start of a name or word. */
export const GET = apiRoute(async ({ locals, url }) => {
  const m = requireCurrentArchive(locals, 'viewer');
  const q = (url.searchParams.get('q') ?? '').slice(0, 100);
  return json({ people: await findPeople(m.archiveId, q) });
});
