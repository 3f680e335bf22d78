/** The batch review page's batch, if the caller may see it, and the batches its prints may move to. */
import { Batch } from '../../../../db/index.ts';
import { roleAtLeast } from '../../auth/roles.ts';
import { batchForCaller } from '../batches.ts';

export interface BatchOverview {
  batch: Batch;
  /** The archive's other batches, newest first, for editors (who may move a print there); none for viewers. */
  moveTargets: { id: string; name: string }[];
}

/** A batch as the batch review page shows it; another archive's batch is 404. Its prints come a page at a time (review-list.ts). */
export async function batchOverview(locals: App.Locals, batchId: string | undefined): Promise<BatchOverview> {
  const batch = await batchForCaller(locals, batchId, 'viewer');
  const role = locals.memberships.find((m) => m.archiveId === batch.archiveId)?.role;
  if (!roleAtLeast(role, 'editor')) return { batch, moveTargets: [] };
  const others = await Batch.findAll({ where: { archiveId: batch.archiveId }, attributes: ['id', 'name'], order: [['createdAt', 'DESC']] });
  return { batch, moveTargets: others.filter((b) => b.id !== batch.id).map((b) => ({ id: b.id, name: b.name })) };
}
