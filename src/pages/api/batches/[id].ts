import { idParam } from '../../../lib/server/access.ts';
import { batchForCaller, batchStatus } from '../../../lib/server/batches.ts';
import { apiRoute, json } from '../../../lib/server/http.ts';

/** One batch's status: its details and counts per item state. */
export const GET = apiRoute(async ({ locals, params }) => {
  const batch = await batchForCaller(locals, idParam(params.id, 'That batch'), 'viewer');
  return json(await batchStatus(batch));
});
