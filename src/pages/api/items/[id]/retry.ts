import { apiRoute, json } from '../../../../lib/server/http.ts';
import { retryAnalysis } from '../../../../lib/server/retry.ts';

/** Queues a failed item's analysis again (editors and owners): 202. Only failed items can be retried. */
export const POST = apiRoute(async ({ locals, params }) => {
  const queued = await retryAnalysis(locals, params.id);
  return json(queued, 202, { location: `/api/items/${queued.id}` });
});
