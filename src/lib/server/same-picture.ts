/**
 * Prints that are the same picture: the same print fed twice, a second print from the same
 * negative, or the rescan from the negative of a print set aside for one. The analysis stores each
 * print's fingerprint (items.fingerprint, src/lib/images/fingerprint.ts) and then looks across the
 * whole archive for prints within SAME_PICTURE_DISTANCE; each pair found is kept in same_pictures
 * for the editor to decide: keep both, keep one (the other is removed the usual way, restorable for
 * 30 days), link them as the same picture, or, for a rescan, use it as the set-aside print's scan.
 * A decided pair is never proposed again.
 */
import { QueryTypes, type Transaction } from 'sequelize';
import { Batch, Item, db } from '../../../db/index.ts';
import { SAME_PICTURE_DISTANCE } from '../images/fingerprint.ts';
import type { SamePictureChoice } from '../review/same-picture.ts';
import { recordAudit } from './audit.ts';
import { Conflict, InvalidInput, NotFound } from './errors.ts';
import { smallCopyUrl } from './files.ts';
import { loadItemFor } from './item-access.ts';
import { removeItem } from './removal.ts';
import { useRescanScan } from './rescans.ts';

/** A print of the archive whose fingerprint is near a given one. */
export interface NearPrint {
  id: string;
  distance: number;
}

/**
 * Prints of an archive (not removed) whose fingerprint is at most `maxDistance` bits from
 * `fingerprint` (32 hexadecimal digits), nearest first. One pass over the archive's fingerprints,
 * read from their partial index (items_fingerprint_by_archive) without touching the rows.
 */
export async function nearPrints(archiveId: string, fingerprint: string, options: { except?: string; maxDistance?: number; transaction?: Transaction } = {}): Promise<NearPrint[]> {
  const rows = await db().query<{ id: string; distance: number }>(
    `SELECT id, bit_count(fingerprint # ('x' || :fingerprint)::bit(128)) AS distance
       FROM items
      WHERE archive_id = :archiveId AND fingerprint IS NOT NULL AND deleted_at IS NULL AND id <> :except
        AND bit_count(fingerprint # ('x' || :fingerprint)::bit(128)) <= :max
      ORDER BY 2, 1`,
    {
      replacements: { archiveId, fingerprint, except: options.except ?? '00000000-0000-0000-0000-000000000000', max: options.maxDistance ?? SAME_PICTURE_DISTANCE },
      type: QueryTypes.SELECT,
      transaction: options.transaction,
    },
  );
  return rows.map((r) => ({ id: r.id, distance: Number(r.distance) }));
}

/**
 * Looks for other prints of the archive showing the same picture as `itemId`, whose fingerprint
 * the analysis has just stored, and proposes each pair not seen before. Pairs still open from the
 * print's earlier scan are dropped first (a rescan gives another fingerprint); decided pairs stay,
 * so a pair the editor dismissed is not proposed again. Idempotent.
 */
export async function proposeSamePictures(itemId: string): Promise<number> {
  const [me] = await db().query<{ archive_id: string; fingerprint: string | null; created_at: Date }>(
    `SELECT archive_id, fingerprint::text AS fingerprint, created_at FROM items WHERE id = :itemId AND deleted_at IS NULL`,
    { replacements: { itemId }, type: QueryTypes.SELECT },
  );
  if (!me) return 0;
  return db().transaction(async (transaction) => {
    await db().query(`DELETE FROM same_pictures WHERE outcome = 'open' AND (first_item_id = :itemId OR second_item_id = :itemId)`, { replacements: { itemId }, transaction });
    if (!me.fingerprint) return 0;
    const hex = BigInt(`0b${me.fingerprint}`).toString(16).padStart(32, '0');
    const near = await nearPrints(me.archive_id, hex, { except: itemId, transaction });
    if (!near.length) return 0;
    // the print that came first is the pair's first; one row a pair whichever print found it
    const [, result] = await db().query(
      `INSERT INTO same_pictures (archive_id, first_item_id, second_item_id, distance)
       SELECT :archiveId,
              CASE WHEN (o.created_at, o.id) < (:createdAt, :itemId::uuid) THEN o.id ELSE :itemId::uuid END,
              CASE WHEN (o.created_at, o.id) < (:createdAt, :itemId::uuid) THEN :itemId::uuid ELSE o.id END,
              n.distance
         FROM unnest(ARRAY[:ids]::uuid[], ARRAY[:distances]::int[]) AS n(id, distance) JOIN items o ON o.id = n.id
       ON CONFLICT DO NOTHING`,
      { replacements: { archiveId: me.archive_id, itemId, createdAt: me.created_at, ids: near.map((n) => n.id), distances: near.map((n) => n.distance) }, transaction },
    );
    return (result as { rowCount?: number })?.rowCount ?? 0;
  });
}

/** The other print of a pair, as the print page shows it. */
export interface OtherPrint {
  id: string;
  seq: number;
  batchId: string;
  batchName: string;
  originalName: string;
  /** Set aside for a rescan from its negative. */
  setAside: boolean;
  previewUrl: string;
  thumbnailUrl: string;
}

/** A pair of a print with another print of the same picture. */
export interface SamePicturePair {
  pairId: string;
  distance: number;
  outcome: 'open' | 'linked';
  other: OtherPrint;
  /**
   * This print is a rescan (its batch was uploaded as rescans) and the other is set aside for one:
   * the editor may use this scan as the other print's scan.
   */
  rescanOf: boolean;
  /** The other way round: this print is set aside for a rescan and the other is a rescan that shows it. */
  rescanFound: boolean;
}

/** The pairs to show on a print's page: proposals still open, and prints linked to it as the same picture. */
export async function samePicturesOf(item: Item): Promise<{ thisPrint: OtherPrint; pairs: SamePicturePair[] }> {
  const rows = await db().query<Record<string, unknown>>(
    `SELECT sp.id AS pair_id, sp.distance, sp.outcome, o.id, o.seq, o.batch_id, b.name AS batch_name, o.original_name, o.decision,
            o.original_id, o.thumb_key, o.preview_key, o.preview_version, b.holds_rescans
       FROM same_pictures sp
       JOIN items o ON o.id = CASE WHEN sp.first_item_id = :id THEN sp.second_item_id ELSE sp.first_item_id END
       JOIN batches b ON b.id = o.batch_id
      WHERE (sp.first_item_id = :id OR sp.second_item_id = :id) AND sp.outcome IN ('open', 'linked')
        AND o.deleted_at IS NULL AND b.deleted_at IS NULL AND o.state = 'ready'
      ORDER BY sp.outcome DESC, sp.distance, b.created_at, o.seq`,
    { replacements: { id: item.id }, type: QueryTypes.SELECT },
  );
  const batch = await Batch.findByPk(item.batchId);
  const holdsRescans = batch?.holdsRescans ?? false;
  const print = (r: Record<string, unknown>, batchName: string): OtherPrint => {
    const source = { id: r.id as string, originalId: r.original_id as string, thumbKey: r.thumb_key as string | null, previewKey: r.preview_key as string | null, previewVersion: r.preview_version as number | null };
    return {
      id: r.id as string,
      seq: Number(r.seq),
      batchId: r.batch_id as string,
      batchName,
      originalName: r.original_name as string,
      setAside: r.decision === 'rescan',
      previewUrl: smallCopyUrl(source, 'preview'),
      thumbnailUrl: smallCopyUrl(source, 'thumbnail'),
    };
  };
  const thisPrint = print(
    { id: item.id, seq: item.seq, batch_id: item.batchId, original_name: item.originalName, decision: item.decision, original_id: item.originalId, thumb_key: item.thumbKey, preview_key: item.previewKey, preview_version: item.previewVersion },
    batch?.name ?? '',
  );
  return {
    thisPrint,
    pairs: rows.map((r) => ({
      pairId: r.pair_id as string,
      distance: Number(r.distance),
      outcome: r.outcome as 'open' | 'linked',
      other: print(r, r.batch_name as string),
      rescanOf: r.outcome === 'open' && holdsRescans && r.decision === 'rescan' && item.decision !== 'rescan',
      rescanFound: r.outcome === 'open' && item.decision === 'rescan' && r.holds_rescans === true && r.decision !== 'rescan',
    })),
  };
}

/** What deciding a pair did. */
export interface SamePictureDecision {
  pairId: string;
  outcome: 'kept_both' | 'kept_one' | 'linked' | 'rescan_used';
  /** The print that stays, for kept_one and rescan_used. */
  keptItemId: string | null;
  /** The print removed (restorable from "Recently removed"), for kept_one and rescan_used. */
  removedItemId: string | null;
}

/**
 * The editor's choice for a print and another print of the same archive (editors): keep both (the
 * pair is not proposed again), keep this one or the other one (the other is removed as any print
 * is: restorable for 30 days), link them as the same picture (shown on both prints' pages), or use
 * this rescan as the scan of the other print, set aside for one (see {@link useRescanScan}).
 * A pair need not have been proposed to be linked or kept both.
 * @throws {InvalidInput} for a print paired with itself; {@link NotFound} for a print of another archive
 * @throws {Conflict} when the rescan cannot be used (the other print is not set aside, or this one is no rescan)
 */
export async function decideSamePicture(locals: App.Locals, itemId: string | undefined, input: { otherId: string; choice: SamePictureChoice }): Promise<SamePictureDecision> {
  const item = await loadItemFor(locals, itemId, 'editor');
  if (input.otherId === item.id) throw new InvalidInput('A print is always the same picture as itself: choose another print.', { otherId: 'Choose another print.' });
  const other = await loadItemFor(locals, input.otherId, 'editor');
  if (other.archiveId !== item.archiveId) throw new NotFound('That other print');
  const actor = { userId: locals.user!.id, requestId: locals.requestId };

  if (input.choice === 'use_rescan') {
    const batch = await Batch.findByPk(item.batchId);
    if (!batch?.holdsRescans) throw new Conflict('This scan was not uploaded as a rescan, so it cannot replace another print’s scan.', 'not_a_rescan');
    if (other.decision !== 'rescan') throw new Conflict(`Print ${other.seq} is not set aside for a rescan.`, 'not_set_aside');
    await useRescanScan(other, item, actor);
    // the rescan's own entry goes: its scan is now the set-aside print's
    await removeItem(item, actor);
    const pairId = await settlePair(item, other, 'rescan_used', other.id, actor.userId);
    return { pairId, outcome: 'rescan_used', keptItemId: other.id, removedItemId: item.id };
  }
  if (input.choice === 'keep_this' || input.choice === 'keep_other') {
    const [kept, gone] = input.choice === 'keep_this' ? [item, other] : [other, item];
    await removeItem(gone, actor);
    const pairId = await settlePair(item, other, 'kept_one', kept.id, actor.userId);
    return { pairId, outcome: 'kept_one', keptItemId: kept.id, removedItemId: gone.id };
  }
  const outcome = input.choice === 'link' ? 'linked' : 'kept_both';
  const pairId = await settlePair(item, other, outcome, null, actor.userId);
  return { pairId, outcome, keptItemId: null, removedItemId: null };
}

/** Records the outcome of a pair, proposed or not, and its audit entry. */
async function settlePair(item: Item, other: Item, outcome: SamePictureDecision['outcome'], keptItemId: string | null, userId: string): Promise<string> {
  return db().transaction(async (transaction) => {
    const [first, second] = item.createdAt <= other.createdAt ? [item, other] : [other, item];
    const [row] = await db().query<{ id: string; distance: number }>(
      `INSERT INTO same_pictures (archive_id, first_item_id, second_item_id, distance, outcome, kept_item_id, decided_by, decided_at)
       VALUES (:archiveId, :first, :second,
               coalesce(bit_count((SELECT fingerprint FROM items WHERE id = :first) # (SELECT fingerprint FROM items WHERE id = :second)), 128),
               :outcome, :kept, :userId, now())
       ON CONFLICT (LEAST(first_item_id, second_item_id), GREATEST(first_item_id, second_item_id))
       DO UPDATE SET outcome = EXCLUDED.outcome, kept_item_id = EXCLUDED.kept_item_id, decided_by = EXCLUDED.decided_by, decided_at = EXCLUDED.decided_at
       RETURNING id, distance`,
      { replacements: { archiveId: item.archiveId, first: first.id, second: second.id, outcome, kept: keptItemId, userId }, type: QueryTypes.SELECT, transaction },
    );
    await recordAudit(
      { archiveId: item.archiveId, actorId: userId, action: 'item.same_picture', subjectType: 'item', subjectId: item.id, details: { otherId: other.id, outcome, keptItemId, distance: Number(row.distance) } },
      transaction,
    );
    return row.id;
  });
}
