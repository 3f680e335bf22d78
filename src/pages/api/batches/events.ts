import { requireCurrentArchive } from '../../../lib/server/access.ts';
import { eventStream } from '../../../lib/server/event-stream.ts';
import { apiRoute } from '../../../lib/server/http.ts';
import { archiveCounts, watchArchive, type LiveEvent } from '../../../lib/server/item-events.ts';

/**
 * Server-sent events of every batch of the current archive (viewers and up): a batch's `counts`
 * after each change of its items, for the batch list's progress bars (one stream for the whole
 * list): every batch's counts at once, then a batch's after each change. `stale` says changes may
 * have been missed (connect again).
 */
export const GET = apiRoute(async ({ locals, request }) => {
  const membership = requireCurrentArchive(locals, 'viewer');
  return eventStream(
    request,
    (send) => watchArchive(membership.archiveId, send),
    async () => [...(await archiveCounts(membership.archiveId))].map(([batchId, counts]): LiveEvent => ({ kind: 'counts', batchId, counts })),
  );
});
