/** Trying a failed print's analysis again. */
import { Item } from '../../../db/index.ts';
import { recordAudit } from './audit.ts';
import { Conflict } from './errors.ts';
import { loadItemFor } from './item-access.ts';
import { enqueueAnalyse } from './processing.ts';

/** Queues the analysis of a failed print again (editors); any other state is a 409 and changes nothing. */
export async function retryAnalysis(locals: App.Locals, id: string | undefined): Promise<{ id: string; state: 'queued' }> {
  const item = await loadItemFor(locals, id, 'editor', { withOriginal: true });
  const [changed] = await Item.update({ state: 'queued', failureReason: null }, { where: { id: item.id, state: 'failed' } });
  if (changed === 0) throw new Conflict(`Only a failed item can be tried again; this one is ${item.state}.`, 'not_failed');
  await enqueueAnalyse(item.id, (item.original.width ?? 0) * (item.original.height ?? 0));
  await recordAudit({ archiveId: item.archiveId, actorId: locals.user!.id, action: 'item.retry', subjectType: 'item', subjectId: item.id, requestId: locals.requestId });
  return { id: item.id, state: 'queued' };
}
