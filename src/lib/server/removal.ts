/**
 * Taking prints and batches out of the archive, moving a print to another batch, and undoing a
 * removal. A removal is a soft delete (the Item and Batch models are paranoid): the rows and the
 * original scans stay for {@link KEEP_REMOVED_DAYS} days, listed under "Recently removed", and only
 * the purge ({@link purgeRemoved}, run by jobs/purge-removed.ts) deletes rows and files after that.
 */
import type { RemovedEntry } from '../review/types.ts';
import { Op, QueryTypes } from 'sequelize';
import { Batch, Item, db } from '../../../db/index.ts';
import { recordAudit } from './audit.ts';
import { Conflict, InvalidInput, NotFound } from './errors.ts';
import { derivedKeys } from './processing.ts';
import { backKeys } from './backs.ts';
import { storage } from './storage.ts';

/** How long a removed print or batch can be restored before the purge deletes it. */
export const KEEP_REMOVED_DAYS = 30;
const DAY_MS = 86_400_000;

/** The day from which a print removed at `removedAt` may be purged. */
export function purgeDate(removedAt: Date): Date {
  return new Date(removedAt.getTime() + KEEP_REMOVED_DAYS * DAY_MS);
}

/** What a removal takes with it, for the confirmation to say before anything goes. */
export interface RemovalSummary {
  prints: number;
  decided: number;
  captioned: number;
  /** Prints with a version of the correction an operator made by hand. */
  adjusted: number;
  purgeAfter: string;
}

/** Counts what removing the prints of `where` would take: decisions, captions and hand-made corrections. */
async function summarise(where: string, replacements: Record<string, unknown>): Promise<RemovalSummary> {
  const [row] = await db().query<{ prints: string; decided: string; captioned: string; adjusted: string }>(
    `SELECT count(*) AS prints,
            count(*) FILTER (WHERE i.decision IS NOT NULL) AS decided,
            count(*) FILTER (WHERE i.caption IS NOT NULL OR i.date_edtf IS NOT NULL OR i.place IS NOT NULL
                              OR EXISTS (SELECT 1 FROM item_people ip WHERE ip.item_id = i.id)) AS captioned,
            count(*) FILTER (WHERE EXISTS (SELECT 1 FROM corrections c WHERE c.item_id = i.id AND c.origin = 'operator')) AS adjusted
       FROM items i WHERE i.deleted_at IS NULL AND ${where}`,
    { replacements, type: QueryTypes.SELECT },
  );
  return {
    prints: Number(row.prints),
    decided: Number(row.decided),
    captioned: Number(row.captioned),
    adjusted: Number(row.adjusted),
    purgeAfter: purgeDate(new Date()).toISOString(),
  };
}

/** What removing one print would take. */
export function itemRemovalSummary(item: Item): Promise<RemovalSummary> {
  return summarise('i.id = :id', { id: item.id });
}

/** What removing a batch would take (all its prints). */
export function batchRemovalSummary(batch: Batch): Promise<RemovalSummary> {
  return summarise('i.batch_id = :id', { id: batch.id });
}

/** Who does it, for the audit trail. */
export interface Actor {
  userId: string;
  requestId?: string | null;
}

/** Removes one print: out of every list, restorable for 30 days. */
export async function removeItem(item: Item, actor: Actor): Promise<{ id: string; removedAt: string; purgeAfter: string }> {
  const summary = await itemRemovalSummary(item);
  await db().transaction(async (transaction) => {
    await item.destroy({ transaction });
    await recordAudit(
      { archiveId: item.archiveId, actorId: actor.userId, action: 'item.remove', subjectType: 'item', subjectId: item.id, details: { batchId: item.batchId, seq: item.seq, originalName: item.originalName, ...summary }, requestId: actor.requestId },
      transaction,
    );
  });
  return { id: item.id, removedAt: item.deletedAt!.toISOString(), purgeAfter: purgeDate(item.deletedAt!).toISOString() };
}

/**
 * Removes a batch and every print in it at one moment, so restoring the batch brings back the
 * prints removed with it and not those removed on their own before.
 */
export async function removeBatch(batch: Batch, actor: Actor): Promise<{ id: string; prints: number; removedAt: string; purgeAfter: string }> {
  const summary = await batchRemovalSummary(batch);
  const removedAt = new Date();
  await db().transaction(async (transaction) => {
    await db().query('UPDATE items SET deleted_at = :removedAt WHERE batch_id = :id AND deleted_at IS NULL', { replacements: { id: batch.id, removedAt }, transaction });
    await db().query('UPDATE batches SET deleted_at = :removedAt WHERE id = :id AND deleted_at IS NULL', { replacements: { id: batch.id, removedAt }, transaction });
    await recordAudit(
      { archiveId: batch.archiveId, actorId: actor.userId, action: 'batch.remove', subjectType: 'batch', subjectId: batch.id, details: { name: batch.name, ...summary }, requestId: actor.requestId },
      transaction,
    );
  });
  return { id: batch.id, prints: summary.prints, removedAt: removedAt.toISOString(), purgeAfter: purgeDate(removedAt).toISOString() };
}

/** The next free print number of a batch (numbers of removed prints stay theirs until purged). */
async function nextSeq(batchId: string, transaction: import('sequelize').Transaction): Promise<number> {
  const [row] = await db().query<{ n: number | null }>('SELECT max(seq) AS n FROM items WHERE batch_id = :batchId', { replacements: { batchId }, type: QueryTypes.SELECT, transaction });
  return (row?.n ?? 0) + 1;
}

/**
 * Moves a print to another batch of the same archive, where it takes the next number. Its
 * corrections, decision, captions and back go with it.
 * @throws {Conflict} when the target batch already holds the same scan
 */
export async function moveItem(item: Item, target: Batch, actor: Actor): Promise<{ id: string; batchId: string; seq: number }> {
  if (target.archiveId !== item.archiveId) throw new NotFound('That batch');
  if (target.id === item.batchId) throw new InvalidInput('The print is already in that batch.', { batchId: 'Choose another batch.' });
  return db().transaction(async (transaction) => {
    await Batch.findByPk(target.id, { transaction, lock: transaction.LOCK.UPDATE, attributes: ['id'] });
    const twin = await Item.findOne({ where: { batchId: target.id, originalId: item.originalId }, transaction });
    if (twin) throw new Conflict(`"${target.name}" already holds the same scan, as print ${twin.seq}.`, 'already_in_batch');
    const from = { batchId: item.batchId, seq: item.seq };
    const seq = await nextSeq(target.id, transaction);
    await item.update({ batchId: target.id, seq, uploadKey: null }, { transaction });
    // its back goes with it
    await db().query('UPDATE print_backs SET batch_id = :to, upload_key = NULL, updated_at = now() WHERE front_item_id = :id', { replacements: { to: target.id, id: item.id }, transaction });
    await recordAudit(
      { archiveId: item.archiveId, actorId: actor.userId, action: 'item.move', subjectType: 'item', subjectId: item.id, details: { from, to: { batchId: target.id, seq } }, requestId: actor.requestId },
      transaction,
    );
    return { id: item.id, batchId: target.id, seq };
  });
}

/**
 * Brings back a print removed on its own. A print removed with its batch comes back with the batch.
 * @throws {Conflict} when its batch is removed too, or the same scan was uploaded into the batch again
 */
export async function restoreItem(archiveId: string, itemId: string, actor: Actor): Promise<{ id: string; batchId: string; seq: number }> {
  return db().transaction(async (transaction) => {
    const item = await Item.findOne({ where: { id: itemId, archiveId, deletedAt: { [Op.ne]: null } }, paranoid: false, transaction });
    if (!item) throw new NotFound('That removed print');
    const batch = await Batch.findByPk(item.batchId, { transaction, lock: transaction.LOCK.UPDATE });
    if (!batch) throw new Conflict('This print was removed with its batch: restore the batch to bring it back.', 'batch_removed');
    const twin = await Item.findOne({ where: { batchId: item.batchId, originalId: item.originalId }, transaction });
    if (twin) throw new Conflict(`The same scan is in "${batch.name}" again, as print ${twin.seq}.`, 'already_in_batch');
    const taken = await Item.findOne({ where: { batchId: item.batchId, seq: item.seq }, transaction });
    const seq = taken ? await nextSeq(item.batchId, transaction) : item.seq;
    await item.restore({ transaction });
    if (seq !== item.seq) await item.update({ seq }, { transaction });
    await recordAudit({ archiveId, actorId: actor.userId, action: 'item.restore', subjectType: 'item', subjectId: item.id, details: { batchId: item.batchId, seq }, requestId: actor.requestId }, transaction);
    return { id: item.id, batchId: item.batchId, seq };
  });
}

/**
 * Brings back a removed batch with the prints removed with it. If another batch took its name
 * meanwhile, it comes back as "<name> (restored)".
 */
export async function restoreBatch(archiveId: string, batchId: string, actor: Actor): Promise<{ id: string; name: string; prints: number }> {
  return db().transaction(async (transaction) => {
    const batch = await Batch.findOne({ where: { id: batchId, archiveId, deletedAt: { [Op.ne]: null } }, paranoid: false, transaction, lock: transaction.LOCK.UPDATE });
    if (!batch) throw new NotFound('That removed batch');
    let name = batch.name;
    for (let n = 1; await Batch.findOne({ where: { archiveId, name }, transaction }); n++) name = `${batch.name} (restored${n > 1 ? ` ${n}` : ''})`;
    const [, rows] = await db().query('UPDATE items SET deleted_at = NULL WHERE batch_id = :id AND deleted_at = :removedAt RETURNING id', { replacements: { id: batch.id, removedAt: batch.deletedAt }, transaction });
    await db().query('UPDATE batches SET deleted_at = NULL, name = :name WHERE id = :id', { replacements: { id: batch.id, name }, transaction });
    const prints = (rows as { rowCount?: number })?.rowCount ?? 0;
    await recordAudit({ archiveId, actorId: actor.userId, action: 'batch.restore', subjectType: 'batch', subjectId: batch.id, details: { name, prints }, requestId: actor.requestId }, transaction);
    return { id: batch.id, name, prints };
  });
}

/** Batches removed, and prints removed on their own, that can still be restored; newest first. */
export async function recentlyRemoved(archiveId: string): Promise<RemovedEntry[]> {
  const batches = await db().query<{ id: string; name: string; deleted_at: Date; prints: string }>(
    `SELECT b.id, b.name, b.deleted_at, (SELECT count(*) FROM items i WHERE i.batch_id = b.id AND i.deleted_at = b.deleted_at) AS prints
       FROM batches b WHERE b.archive_id = :archiveId AND b.deleted_at IS NOT NULL ORDER BY b.deleted_at DESC`,
    { replacements: { archiveId }, type: QueryTypes.SELECT },
  );
  const prints = await db().query<{ id: string; batch_id: string; name: string; seq: number; original_name: string; deleted_at: Date }>(
    `SELECT i.id, i.batch_id, b.name, i.seq, i.original_name, i.deleted_at FROM items i JOIN batches b ON b.id = i.batch_id
      WHERE i.archive_id = :archiveId AND i.deleted_at IS NOT NULL AND b.deleted_at IS NULL ORDER BY i.deleted_at DESC, i.seq`,
    { replacements: { archiveId }, type: QueryTypes.SELECT },
  );
  const entries: RemovedEntry[] = [
    ...batches.map((b) => ({ kind: 'batch' as const, id: b.id, batchName: b.name, batchId: b.id, seq: null, originalName: null, prints: Number(b.prints), removedAt: b.deleted_at.toISOString(), purgeAfter: purgeDate(b.deleted_at).toISOString() })),
    ...prints.map((p) => ({ kind: 'print' as const, id: p.id, batchName: p.name, batchId: p.batch_id, seq: p.seq, originalName: p.original_name, prints: 1, removedAt: p.deleted_at.toISOString(), purgeAfter: purgeDate(p.deleted_at).toISOString() })),
  ];
  return entries.sort((a, b) => b.removedAt.localeCompare(a.removedAt));
}

/**
 * Deletes for good what was removed more than {@link KEEP_REMOVED_DAYS} days before `now`: the
 * rows of prints and batches, their small copies and renders, and each original scan no print
 * holds any more (an original shared with a print still there, or still restorable, stays).
 * Idempotent: a file already gone is no error, and a second run finds nothing left to do.
 */
export async function purgeRemoved(now = new Date()): Promise<{ prints: number; batches: number; originals: number }> {
  const cutoff = new Date(now.getTime() - KEEP_REMOVED_DAYS * DAY_MS);
  const store = storage();
  const doomed = await db().query<{ id: string; archive_id: string; original_id: string; print_original_id: string | null; current_version: number | null }>(
    `SELECT i.id, i.archive_id, i.original_id, i.print_original_id, i.current_version FROM items i LEFT JOIN batches b ON b.id = i.batch_id
      WHERE (i.deleted_at IS NOT NULL AND i.deleted_at < :cutoff) OR (b.deleted_at IS NOT NULL AND b.deleted_at < :cutoff)`,
    { replacements: { cutoff }, type: QueryTypes.SELECT },
  );
  const originalIds = [...new Set(doomed.flatMap((i) => [i.original_id, i.print_original_id]).filter((x): x is string => !!x))];
  const batchRows = await db().query<{ id: string }>('SELECT id FROM batches WHERE deleted_at IS NOT NULL AND deleted_at < :cutoff', { replacements: { cutoff }, type: QueryTypes.SELECT });
  // the backs of purged prints, and every back of a purged batch, go with them
  const backs = await db().query<{ id: string; original_id: string }>(
    'SELECT id, original_id FROM print_backs WHERE front_item_id IN (:items) OR batch_id IN (:batches)',
    { replacements: { items: doomed.length ? doomed.map((i) => i.id) : [null], batches: batchRows.length ? batchRows.map((b) => b.id) : [null] }, type: QueryTypes.SELECT },
  );
  for (const b of backs) if (!originalIds.includes(b.original_id)) originalIds.push(b.original_id);
  await db().transaction(async (transaction) => {
    if (backs.length) await db().query('DELETE FROM print_backs WHERE id IN (:ids)', { replacements: { ids: backs.map((b) => b.id) }, transaction });
    if (doomed.length) await db().query('DELETE FROM items WHERE id IN (:ids)', { replacements: { ids: doomed.map((i) => i.id) }, transaction });
    if (batchRows.length) await db().query('DELETE FROM batches WHERE id IN (:ids)', { replacements: { ids: batchRows.map((b) => b.id) }, transaction });
  });
  // the small copies and renders of every version a purged print had
  for (const i of doomed) {
    const keys = [derivedKeys.originalPreview(i.id), derivedKeys.originalThumbnail(i.id)];
    for (let v = 1; v <= (i.current_version ?? 0); v++) keys.push(derivedKeys.render(i.id, v), derivedKeys.renderPreview(i.id, v), derivedKeys.renderThumbnail(i.id, v));
    for (const key of keys) await store.remove(key).catch(() => undefined);
  }
  for (const b of backs) for (const key of [backKeys.preview(b.id), backKeys.thumbnail(b.id)]) await store.remove(key).catch(() => undefined);
  // An original goes only once no print row holds it; the row first (items refer to it), then its file.
  let originals = 0;
  for (const id of originalIds) {
    const [gone] = await db().query<{ storage_key: string }>(
      `DELETE FROM originals o WHERE o.id = :id AND NOT EXISTS (SELECT 1 FROM items i WHERE i.original_id = o.id OR i.print_original_id = o.id)
         AND NOT EXISTS (SELECT 1 FROM print_backs pb WHERE pb.original_id = o.id) RETURNING o.storage_key`,
      { replacements: { id }, type: QueryTypes.SELECT },
    );
    if (!gone) continue;
    await store.purgeOriginal(gone.storage_key);
    originals++;
  }
  for (const i of doomed) {
    await recordAudit({ archiveId: i.archive_id, actorId: null, action: 'item.purge', subjectType: 'item', subjectId: i.id, details: { removedBefore: cutoff.toISOString() } });
  }
  return { prints: doomed.length, batches: batchRows.length, originals };
}
