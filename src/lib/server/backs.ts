/**
 * The backs of prints in a batch. A scan the analysis recognises as a back (src/lib/backs/paper-back.ts),
 * or that is named as the back of a print of the batch (src/lib/backs/pairing.ts), stops being a print:
 * its item row gives way to a back row that keeps the same original (write-once, hashed, carried by
 * backups like every original) and the small copies of the scan as it is. It is paired with its
 * front by file name across the batch and by feed order within its upload; the archivist pairs and
 * unpairs by hand on the batch page. A back is never corrected, rendered, reviewed or counted as a print.
 */
import { QueryTypes, type Transaction } from 'sequelize';
import { Batch, Item, PrintBack, Suggestion, db } from '../../../db/index.ts';
import { dateOnBack } from '../backs/back-dates.ts';
import { frontStemOf, pairBacks, type FedScan } from '../backs/pairing.ts';
import type { BackMeasure } from '../backs/paper-back.ts';
import type { BackView } from '../backs/types.ts';
import { recordAudit } from './audit.ts';
import { idParam, requireArchiveRole, requireUser } from './access.ts';
import { Conflict, NotFound } from './errors.ts';
import type { Role } from '../auth/roles.ts';

export type { BackView };

/** Storage keys of a back's small copies (the scan as it is, never corrected). */
export const backKeys = {
  preview: (backId: string) => `previews/backs/${backId}.jpg`,
  thumbnail: (backId: string) => `thumbnails/backs/${backId}.jpg`,
};

/** File names in natural order, as the upload numbers its prints (src/lib/server/ingest.ts). */
const naturalOrder = new Intl.Collator('en', { numeric: true, sensitivity: 'base' });

const stemKey = (name: string) =>
  (name.split(/[\\/]/).pop() ?? name)
    .replace(/\.[A-Za-z0-9]{1,5}$/, '')
    .toLowerCase()
    .replace(/[\s._-]+/g, '_');

/** Whether a print of the batch other than `itemId` has the name the file `name` says it is the back of. */
async function frontNamedInBatch(batchId: string, itemId: string, name: string, transaction: Transaction): Promise<boolean> {
  const stem = frontStemOf(name);
  if (!stem) return false;
  const items = await Item.findAll({ where: { batchId }, attributes: ['id', 'originalName'], transaction });
  return items.some((i) => i.id !== itemId && frontStemOf(i.originalName) === null && stemKey(i.originalName) === stemKey(stem));
}

/** What the analysis hands over for a scan that may be a back. */
export interface BackCandidate {
  itemId: string;
  originalId: string;
  measure: BackMeasure;
  /** Storage keys the caller wrote the scan's small copies under (see {@link backKeys}). */
  keys: { preview: string | null; thumbnail: string };
}

/**
 * Whether the analysed scan is to be kept as a back: its picture looks like one, or its file name
 * says it is the back of a print of the batch. Read before any file is written for it as a print.
 */
export async function isBackScan(itemId: string, measure: BackMeasure): Promise<boolean> {
  const item = await Item.findByPk(itemId, { attributes: ['id', 'batchId', 'originalName', 'currentVersion', 'printOriginalId', 'decision'] });
  // only a new scan: a print already corrected, decided or rescanned stays a print whatever its picture
  if (!item || item.currentVersion !== null || item.printOriginalId !== null || item.decision !== null) return false;
  if (measure.back) return true;
  if (!frontStemOf(item.originalName)) return false;
  return db().transaction((transaction) => frontNamedInBatch(item.batchId, item.id, item.originalName, transaction));
}

/**
 * Turns the print the analysis holds into a back of the batch, then pairs the batch's waiting backs.
 * The back takes the item's id, so a retried job finds its row and changes nothing; the same
 * back uploaded again (a new item for an original already kept as a back) only loses its item.
 * Returns the back's id, or null when the item is no longer held in analysis for that scan.
 */
export async function keepAsBack(c: BackCandidate, analysingBy: string): Promise<string | null> {
  return db().transaction(async (transaction) => {
    const item = await Item.findOne({ where: { id: c.itemId, originalId: c.originalId, state: 'analysing', analysingBy, currentVersion: null, printOriginalId: null, decision: null }, transaction });
    if (!item) return null;
    // the batch row orders the pairing of its backs, as it orders the numbering of its prints
    await Batch.findByPk(item.batchId, { transaction, lock: transaction.LOCK.UPDATE, attributes: ['id'] });
    const [kept] = await db().query<{ id: string }>(
      `INSERT INTO print_backs (id, archive_id, batch_id, original_id, original_name, upload_key, measure, thumb_key, preview_key, created_at, updated_at)
       VALUES (:id, :archiveId, :batchId, :originalId, :name, :uploadKey, :measure::jsonb, :thumb, :preview, :createdAt, now())
       ON CONFLICT (archive_id, original_id) DO NOTHING RETURNING id`,
      {
        replacements: {
          id: item.id,
          archiveId: item.archiveId,
          batchId: item.batchId,
          originalId: item.originalId,
          name: item.originalName,
          uploadKey: item.uploadKey ?? null,
          measure: JSON.stringify(c.measure),
          thumb: c.keys.thumbnail,
          preview: c.keys.preview,
          createdAt: item.createdAt,
        },
        type: QueryTypes.SELECT,
        transaction,
      },
    );
    // a back that was the front of another back leaves that one waiting again
    await PrintBack.update({ frontItemId: null, pairedBy: null }, { where: { frontItemId: item.id }, transaction });
    await db().query('DELETE FROM items WHERE id = :id', { replacements: { id: item.id }, transaction });
    await recordAudit(
      { archiveId: item.archiveId, actorId: null, action: 'item.kept-as-back', subjectType: 'print_back', subjectId: kept ? kept.id : null, details: { batchId: item.batchId, originalName: item.originalName, itemId: item.id, again: !kept } },
      transaction,
    );
    await pairWaitingBacksIn(item.batchId, transaction);
    return kept ? kept.id : null;
  });
}

/**
 * Pairs the batch's waiting backs (none unpaired by hand) with their fronts: by name across the
 * batch, by feed order within one upload. Pairs already made are never changed.
 */
async function pairWaitingBacksIn(batchId: string, transaction: Transaction): Promise<number> {
  const backs = await PrintBack.findAll({ where: { batchId }, transaction });
  if (!backs.some((b) => b.frontItemId === null && b.pairedBy === null)) return 0;
  const items = await Item.findAll({ where: { batchId }, attributes: ['id', 'originalName', 'uploadKey', 'state', 'createdAt'], transaction });
  type Scan = FedScan & { uploadKey: string | null; createdAt: Date };
  const scans: Scan[] = [
    // a print still waiting for its analysis may yet be a back; until then it counts as a front
    ...items.map((i) => ({ id: i.id, seq: 0, name: i.originalName, looksLikeBack: i.state === 'queued' || i.state === 'analysing' ? undefined : false, uploadKey: i.uploadKey, createdAt: i.createdAt })),
    ...backs.map((b) => ({ id: b.id, seq: 0, name: b.originalName, looksLikeBack: true, uploadKey: b.uploadKey, createdAt: b.createdAt })),
  ];
  // feed order: uploads in the order they began, each upload's files in natural order of their names
  const began = new Map<string, number>();
  for (const s of scans) {
    const group = s.uploadKey ?? `single:${s.id}`;
    began.set(group, Math.min(began.get(group) ?? Infinity, s.createdAt.getTime()));
  }
  const groupOf = (s: Scan) => s.uploadKey ?? `single:${s.id}`;
  scans.sort((a, b) => began.get(groupOf(a))! - began.get(groupOf(b))! || groupOf(a).localeCompare(groupOf(b)) || naturalOrder.compare(a.name, b.name));
  scans.forEach((s, n) => (s.seq = n + 1));
  const byId = new Map(scans.map((s) => [s.id, s]));
  const backById = new Map(backs.map((b) => [b.id, b]));
  const taken = new Set(backs.filter((b) => b.frontItemId).map((b) => b.frontItemId!));
  let made = 0;
  for (const p of pairBacks(scans).pairs) {
    const back = backById.get(p.backId);
    if (!back || back.frontItemId !== null || back.pairedBy !== null || taken.has(p.frontId) || backById.has(p.frontId)) continue;
    if (p.by === 'feed order' && groupOf(byId.get(p.frontId)!) !== groupOf(byId.get(p.backId)!)) continue;
    await back.update({ frontItemId: p.frontId, pairedBy: p.by }, { transaction });
    await suggestFromBack(back, transaction);
    taken.add(p.frontId);
    made++;
  }
  return made;
}

/** Pairs the batch's waiting backs after a print's analysis (a named back may have come before its front). */
export async function pairWaitingBacks(batchId: string): Promise<number> {
  const [waiting] = await db().query<{ n: number }>(`SELECT count(*)::int AS n FROM print_backs WHERE batch_id = :batchId AND front_item_id IS NULL AND paired_by IS NULL`, {
    replacements: { batchId },
    type: QueryTypes.SELECT,
  });
  if (!waiting?.n) return 0;
  return db().transaction(async (transaction) => {
    await Batch.findByPk(batchId, { transaction, lock: transaction.LOCK.UPDATE, attributes: ['id'] });
    return pairWaitingBacksIn(batchId, transaction);
  });
}

function view(b: PrintBack, frontSeq: number | null): BackView {
  return { id: b.id, batchId: b.batchId, originalName: b.originalName, frontItemId: b.frontItemId, frontSeq, pairedBy: b.pairedBy, backText: b.backText, textRead: b.textReadAt !== null };
}

/** The batch's backs, paired ones in the order of their fronts, then those waiting for a front. */
export async function backsOfBatch(batchId: string): Promise<BackView[]> {
  const backs = await PrintBack.findAll({ where: { batchId }, order: [['originalName', 'ASC']] });
  const fronts = new Map((await Item.findAll({ where: { batchId }, attributes: ['id', 'seq'] })).map((i) => [i.id, i.seq]));
  const views = backs.map((b) => view(b, b.frontItemId ? (fronts.get(b.frontItemId) ?? null) : null));
  return views.sort((a, b) => (a.frontSeq ?? Infinity) - (b.frontSeq ?? Infinity) || naturalOrder.compare(a.originalName, b.originalName));
}

/** The back of a print, if it has one. */
export async function backOfItem(itemId: string): Promise<BackView | null> {
  const b = await PrintBack.findOne({ where: { frontItemId: itemId } });
  if (!b) return null;
  const front = await Item.findByPk(itemId, { attributes: ['seq'] });
  return view(b, front?.seq ?? null);
}

/** The backs of these prints, by the front's id (the captions list and the export). */
export async function backsOfItems(itemIds: string[]): Promise<Map<string, PrintBack>> {
  if (!itemIds.length) return new Map();
  const backs = await PrintBack.findAll({ where: { frontItemId: itemIds } });
  return new Map(backs.map((b) => [b.frontItemId!, b]));
}

/**
 * The back `id` (a route's raw parameter is fine) if the caller holds at least `role` in its
 * archive: 404 for no such back or another archive's, 403 for a lower role.
 */
export async function loadBackFor(locals: App.Locals, id: string | undefined, role: Role, transaction?: Transaction): Promise<PrintBack> {
  requireUser(locals);
  const back = await PrintBack.findByPk(idParam(id, 'That back'), { transaction, lock: transaction ? transaction.LOCK.UPDATE : undefined });
  if (!back) throw new NotFound('That back');
  requireArchiveRole(locals, back.archiveId, role, 'That back');
  return back;
}

interface Actor {
  userId: string;
  requestId?: string;
}

/**
 * Pairs a back with a print of its own batch by hand.
 * @throws {Conflict} when the back already has a front, the print already has a back, or the print is in another batch
 * @throws {NotFound} for no such print in the archive
 */
export async function pairBackByHand(locals: App.Locals, backId: string | undefined, frontItemId: string, actor: Actor): Promise<BackView> {
  return db().transaction(async (transaction) => {
    const probe = await loadBackFor(locals, backId, 'editor');
    await Batch.findByPk(probe.batchId, { transaction, lock: transaction.LOCK.UPDATE, attributes: ['id'] });
    const back = await loadBackFor(locals, backId, 'editor', transaction);
    const front = await Item.findByPk(frontItemId, { transaction });
    if (!front || front.archiveId !== back.archiveId) throw new NotFound('That print');
    if (front.batchId !== back.batchId) throw new Conflict('A back can be paired only with a print of its own batch.', 'other_batch');
    if (back.frontItemId === front.id) throw new Conflict('This back is already paired with that print.', 'already_paired');
    if (back.frontItemId) throw new Conflict('This back is already paired with another print: unpair it first.', 'already_paired');
    if (await PrintBack.count({ where: { frontItemId: front.id }, transaction })) throw new Conflict(`Print ${front.seq} already has a back: unpair that one first.`, 'front_has_back');
    await back.update({ frontItemId: front.id, pairedBy: 'hand' }, { transaction });
    await suggestFromBack(back, transaction);
    await recordAudit(
      { archiveId: back.archiveId, actorId: actor.userId, action: 'back.pair', subjectType: 'print_back', subjectId: back.id, details: { itemId: front.id, seq: front.seq }, requestId: actor.requestId },
      transaction,
    );
    return view(back, front.seq);
  });
}

/** Unpairs a back from its print by hand; it is then never paired again on its own. */
export async function unpairBack(locals: App.Locals, backId: string | undefined, actor: Actor): Promise<BackView> {
  return db().transaction(async (transaction) => {
    const back = await loadBackFor(locals, backId, 'editor', transaction);
    if (!back.frontItemId) throw new Conflict('This back is not paired with a print.', 'not_paired');
    const was = back.frontItemId;
    await back.update({ frontItemId: null, pairedBy: 'apart' }, { transaction });
    await recordAudit(
      { archiveId: back.archiveId, actorId: actor.userId, action: 'back.unpair', subjectType: 'print_back', subjectId: back.id, details: { itemId: was }, requestId: actor.requestId },
      transaction,
    );
    return view(back, null);
  });
}

/** The batch's backs and the prints a back may be paired with, for the batch page. */
export async function batchBacksPage(batchId: string): Promise<{ backs: BackView[]; prints: { id: string; seq: number; originalName: string }[] }> {
  const backs = await backsOfBatch(batchId);
  if (!backs.length) return { backs, prints: [] };
  const prints = await Item.findAll({ where: { batchId }, order: [['seq', 'ASC']], attributes: ['id', 'seq', 'originalName'] });
  return { backs, prints: prints.map((p) => ({ id: p.id, seq: p.seq, originalName: p.originalName })) };
}

/** Where a suggestion made from a back's text says it came from. */
export const READ_FROM_BACK = 'Read from the back of the print';

/**
 * Suggests to the back's print what was read from the back: the text for "Text on the back of the
 * print", and the date found in it (EDTF), saying where it came from. Once per back and print: a
 * back read before it found its print suggests when it is paired.
 */
async function suggestFromBack(back: PrintBack, transaction: Transaction): Promise<void> {
  if (!back.frontItemId || back.textReadAt === null || !back.backText) return;
  if (await Suggestion.count({ where: { printBackId: back.id, itemId: back.frontItemId }, transaction })) return;
  const date = dateOnBack(back.backText);
  await Suggestion.create(
    {
      archiveId: back.archiveId,
      itemId: back.frontItemId,
      suggestedBy: null,
      backText: back.backText,
      dateEdtf: date?.edtf ?? null,
      note: date ? `${READ_FROM_BACK}: the date from "${date.from}".` : `${READ_FROM_BACK}.`,
      printBackId: back.id,
    },
    { transaction },
  );
}

/** Whether a back still waits to be read, with what the reading needs (its archive, its original's storage key). */
export async function backToRead(backId: string): Promise<{ archiveId: string; storageKey: string } | null> {
  const [row] = await db().query<{ archive_id: string; storage_key: string }>(
    'SELECT b.archive_id, o.storage_key FROM print_backs b JOIN originals o ON o.id = b.original_id WHERE b.id = :backId AND b.text_read_at IS NULL',
    { replacements: { backId }, type: QueryTypes.SELECT },
  );
  return row ? { archiveId: row.archive_id, storageKey: row.storage_key } : null;
}

/**
 * Keeps the text read from a back, once (a second reading of the same back changes nothing), and
 * suggests it to the back's print. Returns false when the back was read already or is gone.
 */
export async function recordBackText(backId: string, text: string): Promise<boolean> {
  return db().transaction(async (transaction) => {
    const back = await PrintBack.findByPk(backId, { transaction, lock: transaction.LOCK.UPDATE });
    if (!back || back.textReadAt !== null) return false;
    await back.update({ backText: text.slice(0, 4000) || null, textReadAt: new Date() }, { transaction });
    await suggestFromBack(back, transaction);
    return true;
  });
}

/** Whether a print of the archive waits for its analysis now: the reading of its backs waits for the review's work. */
export async function analysesWaiting(archiveId: string): Promise<boolean> {
  const [row] = await db().query<{ n: number }>(`SELECT count(*)::int AS n FROM (SELECT 1 FROM items WHERE archive_id = :archiveId AND state IN ('queued', 'analysing') AND deleted_at IS NULL LIMIT 1) w`, {
    replacements: { archiveId },
    type: QueryTypes.SELECT,
  });
  return (row?.n ?? 0) > 0;
}
