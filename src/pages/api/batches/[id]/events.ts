import { batchForCaller, listItemStates, stateCounts } from '../../../../lib/server/batches.ts';
import { eventStream } from '../../../../lib/server/event-stream.ts';
import { apiRoute } from '../../../../lib/server/http.ts';
import { watchBatch, type LiveEvent } from '../../../../lib/server/item-events.ts';

/**
 * Server-sent events of one batch (viewers and up): `counts` at once and after every change of its
 * items; with `?items=1` also `items`, the items that changed (and `gone`, those removed or moved
 * out), with every item of the batch at once. `stale` says changes may have been missed (read the
 * state again). Pushed from the database's item announcements (item-events.ts), never polled.
 */
export const GET = apiRoute(async ({ locals, params, request, url }) => {
  const batch = await batchForCaller(locals, params.id, 'viewer');
  const items = url.searchParams.get('items') === '1';
  return eventStream(
    request,
    (send) => watchBatch(batch.id, { items }, send),
    async () => {
      const first: LiveEvent[] = [{ kind: 'counts', batchId: batch.id, counts: (await stateCounts([batch.id])).get(batch.id)! }];
      if (items) first.push({ kind: 'items', batchId: batch.id, items: await listItemStates(batch.id), gone: [], full: true });
      return first;
    },
  );
});
