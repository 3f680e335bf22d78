/**
 * Batches: create, list with counts per item state, one batch's status, and its items with
 * their analysis. Role checks happen here once, so every route and page answers the same.
 */
import { QueryTypes } from 'sequelize';
import { parse as parseEdtf } from 'edtf';
import { Batch, Correction, Item, Original, User, db } from '../../../db/index.ts';
import type { Role } from '../auth/roles.ts';
import { emptyCounts, ITEM_STATES, type BatchCreate, type ItemState, type StateCounts } from '../batches/schemas.ts';
import { idParam, requireArchiveRole, requireUser } from './access.ts';
import { recordAudit } from './audit.ts';
import { Conflict, InvalidInput, NotFound } from './errors.ts';

/** A batch as the API and pages show it. */
export interface BatchSummary {
  id: string;
  archiveId: string;
  name: string;
  sourceKind: string;
  sourceLabel: string;
  dateFrom: string | null;
  dateTo: string | null;
  notes: string;
  createdBy: string | null;
  createdAt: string;
  finishedNotifiedAt: string | null;
  counts: StateCounts;
  /** True when every item has been through analysis (ready or failed). */
  settled: boolean;
}

function checkDate(value: string | undefined, field: string): string | null {
  if (!value) return null;
  try {
    parseEdtf(value);
  } catch {
    throw new InvalidInput('Some fields need attention.', { [field]: 'Not a date we understand: use 1978, 1981-07, 1981~ or 198X.' });
  }
  return value;
}

/** Counts per state for each of `batchIds` (batches without items get zeros). */
export async function stateCounts(batchIds: string[]): Promise<Map<string, StateCounts>> {
  const out = new Map<string, StateCounts>(batchIds.map((id) => [id, emptyCounts()]));
  if (batchIds.length === 0) return out;
  // A print whose correction was replaced after its render (the batch's shared estimate, or an
  // operator's change) keeps counting as made, as "being made again": the count never goes back.
  const rows = await db().query<{ batch_id: string; state: ItemState; n: string; full_size: string; remaking: string; remaking_shared: string }>(
    `SELECT batch_id, state, count(*) AS n,
            count(*) FILTER (WHERE state = 'ready' AND render_version >= current_version) AS full_size,
            count(*) FILTER (WHERE state = 'ready' AND render_version < current_version) AS remaking,
            count(*) FILTER (WHERE state = 'ready' AND render_version < current_version AND EXISTS (
              SELECT 1 FROM corrections c WHERE c.item_id = i.id AND c.version = i.current_version AND c.origin = 'pooled')) AS remaking_shared
       FROM items i WHERE batch_id IN (:ids) AND deleted_at IS NULL GROUP BY batch_id, state`,
    { replacements: { ids: batchIds }, type: QueryTypes.SELECT },
  );
  for (const r of rows) {
    const c = out.get(r.batch_id)!;
    if ((ITEM_STATES as readonly string[]).includes(r.state)) c[r.state] = Number(r.n);
    c.total += Number(r.n);
    c.fullSize += Number(r.full_size);
    c.remaking += Number(r.remaking);
    c.remakingShared += Number(r.remaking_shared);
  }
  return out;
}

function summarise(b: Batch, counts: StateCounts): BatchSummary {
  return {
    id: b.id,
    archiveId: b.archiveId,
    name: b.name,
    sourceKind: b.sourceKind,
    sourceLabel: b.sourceLabel,
    dateFrom: b.dateFrom ?? null,
    dateTo: b.dateTo ?? null,
    notes: b.notes,
    createdBy: b.createdBy,
    createdAt: b.createdAt.toISOString(),
    finishedNotifiedAt: b.finishedNotifiedAt ? b.finishedNotifiedAt.toISOString() : null,
    counts,
    settled: counts.total > 0 && counts.queued === 0 && counts.analysing === 0,
  };
}

/** Creates a batch in `archiveId` for `userId`; a second batch of the same name in one archive is a 409. */
export async function createBatch(archiveId: string, userId: string, input: BatchCreate, requestId?: string): Promise<BatchSummary> {
  const dateFrom = checkDate(input.dateFrom, 'dateFrom');
  const dateTo = checkDate(input.dateTo, 'dateTo');
  const existing = await Batch.findOne({ where: { archiveId, name: input.name } });
  if (existing) throw new Conflict(`There is already a batch called "${input.name}" in this archive.`, 'batch_exists');
  let batch: Batch;
  try {
    batch = await Batch.create({
      archiveId,
      name: input.name,
      sourceKind: input.sourceKind,
      sourceLabel: input.sourceLabel ?? '',
      dateFrom,
      dateTo,
      notes: input.notes ?? '',
      holdsRescans: input.holdsRescans ?? false,
      createdBy: userId,
    });
  } catch (err) {
    if ((err as Error).name === 'SequelizeUniqueConstraintError') throw new Conflict(`There is already a batch called "${input.name}" in this archive.`, 'batch_exists');
    throw err;
  }
  await recordAudit({ archiveId, actorId: userId, action: 'batch.create', subjectType: 'batch', subjectId: batch.id, details: { name: batch.name }, requestId });
  return summarise(batch, emptyCounts());
}

/** Every batch of an archive, newest first, with counts per state. */
export async function listBatches(archiveId: string): Promise<BatchSummary[]> {
  const batches = await Batch.findAll({ where: { archiveId }, order: [['createdAt', 'DESC']] });
  const counts = await stateCounts(batches.map((b) => b.id));
  return batches.map((b) => summarise(b, counts.get(b.id)!));
}

/**
 * The batch `batchId` (a route's raw parameter is fine) if the caller holds at least `role` in its
 * archive: 401 signed out, 404 for no such batch or another archive's, 403 for a lower role.
 */
export async function batchForCaller(locals: App.Locals, batchId: string | undefined, role: Role): Promise<Batch> {
  requireUser(locals);
  const batch = await Batch.findByPk(idParam(batchId, 'That batch'));
  if (!batch) throw new NotFound('That batch');
  requireArchiveRole(locals, batch.archiveId, role, 'That batch');
  return batch;
}

/**
 * Records that an upload request into the batch started or ended, whatever its outcome: the batch
 * is not quiet (nor its "batch finished" e-mail due) while uploads go on. Written at most once a
 * second per batch, so concurrent uploads do not queue on the batch row.
 */
export async function noteUploadActivity(batchId: string): Promise<void> {
  await db().query(`UPDATE batches SET last_upload_at = now() WHERE id = :batchId AND (last_upload_at IS NULL OR last_upload_at < now() - interval '1 second')`, {
    replacements: { batchId },
  });
}

/** A batch's status: the summary with its counts per state. */
export async function batchStatus(batch: Batch): Promise<BatchSummary> {
  const counts = await stateCounts([batch.id]);
  return summarise(batch, counts.get(batch.id)!);
}

/** An item with what the review and download routes need. */
export interface ItemSummary {
  id: string;
  batchId: string;
  seq: number;
  originalName: string;
  state: ItemState;
  failureReason: string | null;
  fadeGrade: string | null;
  currentVersion: number | null;
  renderVersion: number | null;
  analysis: Record<string, unknown> | null;
  original: { sha256: string; bytes: number; mime: string; width: number | null; height: number | null; exif: Record<string, unknown> };
  links: { original: string; preview: string; thumbnail: string; corrected: string | null; retry: string | null };
}

/** Shapes one item (with its original loaded) for the API. */
export function summariseItem(item: Item & { original?: Original }): ItemSummary {
  const o = item.original!;
  return {
    id: item.id,
    batchId: item.batchId,
    seq: item.seq,
    originalName: item.originalName,
    state: item.state,
    failureReason: item.failureReason ?? null,
    fadeGrade: item.fadeGrade ?? null,
    currentVersion: item.currentVersion ?? null,
    renderVersion: item.renderVersion ?? null,
    analysis: item.analysis ?? null,
    original: { sha256: o.sha256, bytes: o.bytes, mime: o.mime, width: o.width, height: o.height, exif: o.exif },
    links: {
      original: `/api/items/${item.id}/original`,
      preview: `/api/items/${item.id}/preview`,
      thumbnail: `/api/items/${item.id}/thumbnail`,
      corrected: item.renderKey ? `/api/items/${item.id}/corrected` : null,
      retry: item.state === 'failed' ? `/api/items/${item.id}/retry` : null,
    },
  };
}

/** A batch's items in scan order, optionally only those in `state`. */
export async function listItems(batchId: string, state?: ItemState): Promise<ItemSummary[]> {
  const items = await Item.findAll({
    where: state ? { batchId, state } : { batchId },
    include: [{ model: Original, as: 'original' }],
    order: [['seq', 'ASC']],
  });
  return items.map((i) => summariseItem(i as Item & { original: Original }));
}

/** The few fields the upload island follows, for every item of a batch (cheap enough to poll). */
export async function listItemStates(batchId: string): Promise<{ id: string; seq: number; originalName: string; state: ItemState; failureReason: string | null }[]> {
  const items = await Item.findAll({ where: { batchId }, attributes: ['id', 'seq', 'originalName', 'state', 'failureReason'], order: [['seq', 'ASC']] });
  return items.map((i) => ({ id: i.id, seq: i.seq, originalName: i.originalName, state: i.state, failureReason: i.failureReason ?? null }));
}

/** Correction versions of an item, oldest first. */
export function correctionsOf(itemId: string): Promise<Correction[]> {
  return Correction.findAll({ where: { itemId }, order: [['version', 'ASC']] });
}

/** The person who made a batch, for its notification. */
export async function batchCreator(batch: Batch): Promise<User | null> {
  return batch.createdBy ? User.findByPk(batch.createdBy) : null;
}
