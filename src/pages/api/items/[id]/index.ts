import { apiRoute, json } from '../../../../lib/server/http.ts';
import { itemDetail } from '../../../../lib/server/review/detail.ts';
import { loadItemFor } from '../../../../lib/server/item-access.ts';

/** One print for review: analysis, current and proposed correction, correction history, decision, neighbours. */
export const GET = apiRoute(async ({ locals, params }) => {
  const item = await loadItemFor(locals, params.id, 'viewer');
  return json({ item: await itemDetail(item) });
});
