import { ITEM_STATES, type ItemState } from '../../../../lib/batches/schemas.ts';
import { idParam } from '../../../../lib/server/access.ts';
import { batchForCaller, listItems, listItemStates } from '../../../../lib/server/batches.ts';
import { InvalidInput } from '../../../../lib/server/errors.ts';
import { apiRoute, json } from '../../../../lib/server/http.ts';

/**
 * A batch's items in scan order with their analysis and download links; `?state=` filters;
 * `?brief=1` gives only id, seq, name, state and failure reason (what the upload page polls).
 */
export const GET = apiRoute(async ({ locals, params, url }) => {
  const batch = await batchForCaller(locals, idParam(params.id, 'That batch'), 'viewer');
  const state = url.searchParams.get('state');
  if (state && !(ITEM_STATES as readonly string[]).includes(state)) throw new InvalidInput(`state must be one of ${ITEM_STATES.join(', ')}.`, { state: 'Unknown state.' });
  if (url.searchParams.has('brief')) return json({ batchId: batch.id, items: await listItemStates(batch.id) });
  return json({ batchId: batch.id, items: await listItems(batch.id, (state as ItemState) || undefined) });
});
