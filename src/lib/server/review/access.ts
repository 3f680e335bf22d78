/** Finding a print or a batch for a caller, with the role checked: another archive's are 404. */
import type { Transaction } from 'sequelize';
import { Batch, Item } from '../../../../db/index.ts';
import type { Role } from '../../auth/roles.ts';
import { requireArchiveRole } from '../access.ts';
import { NotFound } from '../errors.ts';

/** The print with `id` if the caller may act on it with `role`; another archive's prints are 404. */
export async function itemForRole(locals: App.Locals, id: string, role: Role, transaction?: Transaction): Promise<Item> {
  const item = await Item.findByPk(id, { transaction, lock: transaction ? transaction.LOCK.UPDATE : undefined });
  if (!item) throw new NotFound('That print');
  requireArchiveRole(locals, item.archiveId, role, 'That print');
  return item;
}

/** A batch as the batch review page shows it, if the caller may see it; another archive's batch is 404. Its prints come a page at a time (review-list.ts). */
export async function batchOverview(locals: App.Locals, batchId: string): Promise<{ batch: Batch }> {
  const batch = await Batch.findByPk(batchId);
  if (!batch) throw new NotFound('That batch');
  requireArchiveRole(locals, batch.archiveId, 'viewer', 'That batch');
  return { batch };
}
