/**
 * The rescan list (every print set aside for a rescan from its negative, across batches) and
 * attaching the negative's scan to the print's item: it runs through the same pipeline and
 * becomes the current image, while the first print scan is kept as the item's print original.
 */
import type { Readable } from 'node:stream';
import { QueryTypes, type Transaction } from 'sequelize';
import { Correction, Item, Original, db } from '../../../db/index.ts';
import { sourceInWords } from '../archive/source.ts';
import { recordAudit } from './audit.ts';
import { loadItemFor } from './item-access.ts';
import { Conflict, NotFound } from './errors.ts';
import { storeScanOriginal } from './ingest.ts';
import { enqueueAnalyse } from './processing.ts';

/** One print on the rescan list. */
export interface RescanRow {
  itemId: string;
  batchId: string;
  batchName: string;
  sourceKind: string;
  sourceLabel: string;
  seq: number;
  originalName: string;
  negativeAvailable: 'yes' | 'no' | 'unknown' | null;
  negativeLocation: string | null;
  rescanNote: string | null;
  caption: string | null;
  setAsideAt: string | null;
  setAsideBy: string | null;
  thumbnailUrl: string;
  /** A scan uploaded as a rescan that looks like this print, waiting for the editor to confirm it (its print id). */
  foundRescanId: string | null;
}

export interface RescanFilter {
  batchId?: string;
  /** A negative location as recorded; the empty string picks prints whose location is not recorded. */
  location?: string;
}

/** Every print set aside for a rescan in an archive, by batch and scan order. */
export async function listRescans(archiveId: string, filter: RescanFilter = {}): Promise<RescanRow[]> {
  const where = ["i.archive_id = :archiveId", "i.decision = 'rescan'", 'i.deleted_at IS NULL'];
  if (filter.batchId) where.push('i.batch_id = :batchId');
  if (filter.location !== undefined) where.push(filter.location === '' ? "coalesce(i.negative_location, '') = ''" : 'i.negative_location = :location');
  const rows = await db().query<Record<string, unknown>>(
    `SELECT i.id, i.batch_id, b.name AS batch_name, b.source_kind, b.source_label, i.seq, i.original_name, i.negative_available,
            i.negative_location, i.rescan_note, i.caption, i.decided_at, coalesce(u.name, u.email) AS decided_by,
            (SELECT r.id FROM same_pictures sp
               JOIN items r ON r.id = CASE WHEN sp.first_item_id = i.id THEN sp.second_item_id ELSE sp.first_item_id END
               JOIN batches rb ON rb.id = r.batch_id
              WHERE (sp.first_item_id = i.id OR sp.second_item_id = i.id) AND sp.outcome = 'open' AND rb.holds_rescans
                AND r.state = 'ready' AND r.deleted_at IS NULL AND rb.deleted_at IS NULL
              ORDER BY sp.distance LIMIT 1) AS found_rescan
       FROM items i JOIN batches b ON b.id = i.batch_id LEFT JOIN users u ON u.id = i.decided_by
      WHERE ${where.join(' AND ')}
      ORDER BY b.created_at, b.name, i.seq`,
    { replacements: { archiveId, batchId: filter.batchId ?? null, location: filter.location ?? null }, type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    itemId: r.id as string,
    batchId: r.batch_id as string,
    batchName: r.batch_name as string,
    sourceKind: r.source_kind as string,
    sourceLabel: (r.source_label as string) ?? '',
    seq: Number(r.seq),
    originalName: r.original_name as string,
    negativeAvailable: (r.negative_available as RescanRow['negativeAvailable']) ?? null,
    negativeLocation: (r.negative_location as string | null) ?? null,
    rescanNote: (r.rescan_note as string | null) ?? null,
    caption: (r.caption as string | null) ?? null,
    setAsideAt: r.decided_at ? new Date(r.decided_at as string).toISOString() : null,
    setAsideBy: (r.decided_by as string | null) ?? null,
    thumbnailUrl: `/api/items/${r.id}/thumbnail`,
    foundRescanId: (r.found_rescan as string | null) ?? null,
  }));
}

/** The batches and negative locations that have prints on the list (for the filters). */
export async function rescanFacets(archiveId: string): Promise<{ batches: { id: string; name: string; count: number }[]; locations: { location: string; count: number }[] }> {
  const batches = await db().query<{ id: string; name: string; n: string }>(
    `SELECT b.id, b.name, count(*) AS n FROM items i JOIN batches b ON b.id = i.batch_id
      WHERE i.archive_id = :archiveId AND i.decision = 'rescan' AND i.deleted_at IS NULL GROUP BY b.id, b.name, b.created_at ORDER BY b.created_at, b.name`,
    { replacements: { archiveId }, type: QueryTypes.SELECT },
  );
  const locations = await db().query<{ location: string; n: string }>(
    `SELECT coalesce(negative_location, '') AS location, count(*) AS n FROM items
      WHERE archive_id = :archiveId AND decision = 'rescan' AND deleted_at IS NULL GROUP BY 1 ORDER BY 1`,
    { replacements: { archiveId }, type: QueryTypes.SELECT },
  );
  return {
    batches: batches.map((b) => ({ id: b.id, name: b.name, count: Number(b.n) })),
    locations: locations.map((l) => ({ location: l.location, count: Number(l.n) })),
  };
}

/** Prints whose negative's scan was attached and that wait for a fresh look in review. */
export async function attachedRescans(archiveId: string): Promise<{ itemId: string; batchId: string; batchName: string; seq: number; state: string; thumbnailUrl: string; updatedAt: string }[]> {
  const rows = await db().query<Record<string, unknown>>(
    `SELECT i.id, i.batch_id, b.name AS batch_name, i.seq, i.state, i.updated_at FROM items i JOIN batches b ON b.id = i.batch_id
      WHERE i.archive_id = :archiveId AND i.print_original_id IS NOT NULL AND i.decision IS NULL AND i.deleted_at IS NULL ORDER BY i.updated_at DESC LIMIT 100`,
    { replacements: { archiveId }, type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    itemId: r.id as string,
    batchId: r.batch_id as string,
    batchName: r.batch_name as string,
    seq: Number(r.seq),
    state: r.state as string,
    thumbnailUrl: `/api/items/${r.id}/thumbnail?v=${new Date(r.updated_at as string).getTime()}`,
    updatedAt: new Date(r.updated_at as string).toISOString(),
  }));
}

/** Column headings of the CSV to take to the cupboard. */
export const RESCAN_CSV_COLUMNS = [
  'Batch', 'Source', 'Print', 'Scan file', 'Negative kept', 'Where the negative is', 'Note', 'Caption', 'Set aside on', 'Set aside by', 'Item id',
] as const;

/** One CSV record per print on the list, in the order of RESCAN_CSV_COLUMNS. */
export function rescanCsvRecord(r: RescanRow): string[] {
  const kept = { yes: 'yes', no: 'no', unknown: 'not known' }[r.negativeAvailable ?? 'unknown'];
  return [
    r.batchName,
    sourceInWords(r.sourceKind, r.sourceLabel) ?? '',
    String(r.seq),
    r.originalName,
    kept,
    r.negativeLocation ?? '',
    r.rescanNote ?? '',
    r.caption ?? '',
    r.setAsideAt ? r.setAsideAt.slice(0, 10) : '',
    r.setAsideBy ?? '',
    r.itemId,
  ];
}

export interface AttachRescanInput {
  itemId: string;
  name: string;
  body: Readable | AsyncIterable<Uint8Array>;
}

/** What attaching a rescan did. */
export interface AttachRescanResult {
  itemId: string;
  originalId: string;
  printOriginalId: string;
  sha256: string;
  state: string;
}

/**
 * Attaches the negative's scan to a print's item (editors). The scan is taken in exactly as an
 * upload is (streamed, probed, stored once under its SHA-256); the item's current original
 * becomes the new scan and is analysed again; the first print scan stays as print_original_id.
 * @throws {Conflict} while the item is still being analysed, or for the very same scan again
 */
export async function attachRescan(locals: App.Locals, input: AttachRescanInput): Promise<AttachRescanResult> {
  await loadItemFor(locals, input.itemId, 'editor');
  return attachRescanAs({ ...input, userId: locals.user!.id, requestId: locals.requestId });
}

/**
 * Attaches a rescan on behalf of `userId`, whose role the caller has checked (the web route
 * through {@link attachRescan}, the ingest command through the member it acts as).
 */
export async function attachRescanAs(input: AttachRescanInput & { userId: string; requestId?: string }): Promise<AttachRescanResult> {
  const item = await Item.findByPk(input.itemId);
  if (!item) throw new NotFound('That print');
  if (item.state === 'queued' || item.state === 'analysing') throw new Conflict('That print is still being analysed; attach the rescan when it is done.', 'busy');
  const userId = input.userId;
  const stored = await storeScanOriginal({ archiveId: item.archiveId, userId, name: input.name, body: input.body, requestId: input.requestId });
  const result = await db().transaction((transaction) => replaceScan(item.id, stored.original, { userId, requestId: input.requestId, name: input.name, sha256: stored.sha256 }, transaction));
  await enqueueAnalyse(item.id, (stored.original.width ?? 0) * (stored.original.height ?? 0));
  return result;
}

/**
 * Makes `original` (a stored scan of the negative) the current scan of print `itemId`, inside the
 * caller's transaction: the first print scan is kept as print_original_id (originals are never
 * overwritten or deleted here), the corrections made for the old scan go to the audit entry, and
 * the print is queued to be analysed again from the new scan (the caller sends the job after the
 * commit). Its rescan decision is cleared, so it leaves the rescan list.
 * @throws {Conflict} while the print is being analysed, for the very scan it already has, or a scan already in its batch
 */
async function replaceScan(itemId: string, original: Original, by: { userId: string; requestId?: string; name: string; sha256: string }, transaction: Transaction): Promise<AttachRescanResult> {
  const it = await Item.findByPk(itemId, { transaction, lock: transaction.LOCK.UPDATE });
  if (!it) throw new Conflict('That print was removed meanwhile.');
  if (it.state === 'queued' || it.state === 'analysing') throw new Conflict('That print is still being analysed; attach the rescan when it is done.', 'busy');
  if (it.originalId === original.id || it.printOriginalId === original.id) throw new Conflict('That is the same scan this print already has; choose the scan of the negative.', 'same_scan');
  const clash = await Item.findOne({ where: { batchId: it.batchId, originalId: original.id }, transaction });
  if (clash) throw new Conflict(`That scan is already print ${clash.seq} of this batch.`, 'duplicate');
  const printOriginalId = it.printOriginalId ?? it.originalId;
  const before = it.originalId;
  // Correction versions were made for the print scan; the analysis of the negative's scan starts
  // again at version 1 (jobs/analyse.ts). The old versions are kept in the audit log, not lost.
  const corrections = await Correction.findAll({ where: { itemId: it.id }, order: [['version', 'ASC']], transaction });
  const printCorrections = corrections.map((c) => ({ version: c.version, origin: c.origin, params: c.params, createdBy: c.createdBy, createdAt: c.createdAt }));
  await Correction.destroy({ where: { itemId: it.id }, transaction });
  it.set({
    printOriginalId,
    originalId: original.id,
    state: 'queued',
    failureReason: null,
    analysis: null,
    fadeGrade: null,
    thumbKey: null,
    previewKey: null,
    renderKey: null,
    renderVersion: null,
    previewVersion: null,
    renderQueuedVersion: null,
    renderQueuedAt: null,
    currentVersion: null,
    decision: null,
    decidedBy: null,
    decidedAt: null,
    lockVersion: it.lockVersion + 1,
  });
  await it.save({ transaction });
  // the fingerprint was the old scan's; the analysis of the new one stores its own
  await db().query('UPDATE items SET fingerprint = NULL WHERE id = :id', { replacements: { id: it.id }, transaction });
  await recordAudit(
    { archiveId: it.archiveId, actorId: by.userId, action: 'item.rescan_attached', subjectType: 'item', subjectId: it.id, details: { from: before, to: original.id, printOriginalId, sha256: by.sha256, name: by.name, printCorrections }, requestId: by.requestId },
    transaction,
  );
  return { itemId: it.id, originalId: original.id, printOriginalId, sha256: by.sha256, state: it.state };
}

/**
 * Uses the scan of `rescan`, a print uploaded as a rescan from the negative, as the scan of
 * `print`, set aside for one: the print keeps its number, captions and batch, its first scan stays
 * as its print original, and it is analysed again from the rescan (and so leaves the rescan list).
 * The rescan's own entry is for the caller to remove. Both prints are of one archive (checked by the caller).
 * @throws {Conflict} when the print is not set aside for a rescan, or the two are in one batch
 */
export async function useRescanScan(print: Item, rescan: Item, actor: { userId: string; requestId?: string | null }): Promise<AttachRescanResult> {
  if (print.batchId === rescan.batchId) throw new Conflict('The rescan is in the same batch as the print; upload rescans into a batch of their own.', 'same_batch');
  const original = await Original.findByPk(rescan.originalId);
  if (!original) throw new NotFound('The rescan’s scan');
  const result = await db().transaction(async (transaction) => {
    const fresh = await Item.findByPk(print.id, { transaction, lock: transaction.LOCK.UPDATE });
    if (!fresh || fresh.decision !== 'rescan') throw new Conflict(`Print ${print.seq} is not set aside for a rescan.`, 'not_set_aside');
    return replaceScan(print.id, original, { userId: actor.userId, requestId: actor.requestId ?? undefined, name: rescan.originalName, sha256: original.sha256 }, transaction);
  });
  await enqueueAnalyse(print.id, (original.width ?? 0) * (original.height ?? 0));
  return result;
}

/** The untouched originals an item has: the current one, and the print scan when a rescan replaced it. */
export async function originalsOf(item: Item): Promise<{ current: Original | null; print: Original | null }> {
  const [current, print] = await Promise.all([Original.findByPk(item.originalId), item.printOriginalId ? Original.findByPk(item.printOriginalId) : Promise.resolve(null)]);
  return { current, print };
}
