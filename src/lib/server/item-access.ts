/** The one way a route or service finds a print for a caller: looked up and authorised together. */
import type { Transaction } from 'sequelize';
import { Item, Original } from '../../../db/index.ts';
import type { Role } from '../auth/roles.ts';
import { idParam, requireArchiveRole, requireUser } from './access.ts';
import { NotFound } from './errors.ts';

export interface LoadItemOptions {
  /** Read inside this transaction, the row locked for update. */
  transaction?: Transaction;
  /** Bring the print's original scan along (`item.original`). */
  withOriginal?: boolean;
}

export type ItemWithOriginal = Item & { original: Original };

/**
 * The print `id` (a route's raw parameter is fine) if the caller holds at least `role` in its
 * archive: 401 signed out, 404 for no such print or another archive's, 403 for a lower role.
 */
export async function loadItemFor(locals: App.Locals, id: string | undefined, role: Role, options: LoadItemOptions & { withOriginal: true }): Promise<ItemWithOriginal>;
export async function loadItemFor(locals: App.Locals, id: string | undefined, role: Role, options?: LoadItemOptions): Promise<Item>;
export async function loadItemFor(locals: App.Locals, id: string | undefined, role: Role, options: LoadItemOptions = {}): Promise<Item> {
  requireUser(locals);
  const { transaction, withOriginal } = options;
  const item = await Item.findByPk(idParam(id, 'That print'), {
    transaction,
    lock: transaction ? transaction.LOCK.UPDATE : undefined,
    include: withOriginal ? [{ model: Original, as: 'original' }] : undefined,
  });
  if (!item) throw new NotFound('That print');
  requireArchiveRole(locals, item.archiveId, role, 'That print');
  return item;
}
