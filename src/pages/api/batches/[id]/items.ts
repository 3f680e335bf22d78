import { batchForCaller, listItemStates } from '../../../../lib/server/batches.ts';
import { apiRoute, json, parseInput } from '../../../../lib/server/http.ts';
import { listItemsPage, listRowsPage, matchingIds } from '../../../../lib/server/review-list.ts';
import { listQuery, searchParamsToObject } from '../../../../lib/review/listing.ts';

/**
 * A batch's items, one page at a time (`page`, `per`: 100 by default, at most 500; the answer's
 * `next` is the address of the following page, `total` how many match). `q` searches captions,
 * places, the back of the print, the envelope, file names, dates and people (every word must be
 * found); `state`, `decision` (or `undecided`), `grade` and `missing` (caption, date, people)
 * filter; `sort` orders. `view=rows` answers in the batch table's shape with the batch's tally,
 * `view=ids` every match's id and lockVersion unpaged. `?brief=1` gives every item's id, seq,
 * name, state and failure reason (a short list for scripts; the upload page follows the batch event stream, whose `?items=1` carries the same fields).
 */
export const GET = apiRoute(async ({ locals, params, url }) => {
  const batch = await batchForCaller(locals, params.id, 'viewer');
  if (url.searchParams.has('brief')) return json({ batchId: batch.id, items: await listItemStates(batch.id) });
  const q = parseInput(listQuery, searchParamsToObject(url.searchParams));
  if (q.view === 'ids') return json({ batchId: batch.id, items: await matchingIds(batch.id, q) });
  if (q.view === 'rows') return json(await listRowsPage(batch.id, q));
  return json(await listItemsPage(batch.id, q));
});
