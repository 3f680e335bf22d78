import { Item } from '../../../../../db/index.ts';
import { idParam } from '../../../../lib/server/access.ts';
import { recordAudit } from '../../../../lib/server/audit.ts';
import { itemForCaller } from '../../../../lib/server/batches.ts';
import { Conflict } from '../../../../lib/server/errors.ts';
import { apiRoute, json } from '../../../../lib/server/http.ts';
import { enqueueAnalyse } from '../../../../lib/server/processing.ts';

/** Queues a failed item's analysis again (editors and owners): 202. Only failed items can be retried. */
export const POST = apiRoute(async ({ locals, params }) => {
  const item = await itemForCaller(locals, idParam(params.id, 'That item'), 'editor');
  const [changed] = await Item.update({ state: 'queued', failureReason: null }, { where: { id: item.id, state: 'failed' } });
  if (changed === 0) throw new Conflict(`Only a failed item can be tried again; this one is ${item.state}.`, 'not_failed');
  await enqueueAnalyse(item.id, (item.original.width ?? 0) * (item.original.height ?? 0));
  await recordAudit({ archiveId: item.archiveId, actorId: locals.user!.id, action: 'item.retry', subjectType: 'item', subjectId: item.id, requestId: locals.requestId });
  return json({ id: item.id, state: 'queued' }, 202, { location: `/api/items/${item.id}` });
});
