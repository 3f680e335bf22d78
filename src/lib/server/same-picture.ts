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
import { db } from '../../../db/index.ts';
import { SAME_PICTURE_DISTANCE } from '../images/fingerprint.ts';

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
