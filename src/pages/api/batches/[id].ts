import { batchForCaller, batchStatus } from '../../../lib/server/batches.ts';
import { apiRoute, json } from '../../../lib/server/http.ts';

/** One batch's status: its details and counts per item state. */
export const GET = apiRoute(async ({ locals, params }) => {
  const batch = await batchForCaller(locals, params.id, 'viewer');
  return json(await batchStatus(batch));
});
