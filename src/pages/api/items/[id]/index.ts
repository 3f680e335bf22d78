import { idParam } from '../../../../lib/server/access.ts';
import { apiRoute, json } from '../../../../lib/server/http.ts';
import { itemDetail } from '../../../../lib/server/review/detail.ts';
import { itemForRole } from '../../../../lib/server/review/access.ts';

/** One print for review: analysis, current and proposed correction, correction history, decision, neighbours. */
export const GET = apiRoute(async ({ locals, params }) => {
  const item = await itemForRole(locals, idParam(params.id, 'That print'), 'viewer');
  return json({ item: await itemDetail(item) });
});
