/**
 * Fingerprints for prints analysed before the analysis kept them (a database of an earlier
 * version, the demo seeded by it): a few at a time on the worker's engine threads, from the same
 * reduced copy the analysis measures, then looked for across the archive as a new print is.
 * A look takes a few dozen prints, so a batch's analyses wait at most a second or two behind them
 * on the engine threads. Idempotent: a print that has
 * its fingerprint meanwhile is left as it is. Scans under 64 px a side give none and are not asked.
 */
import { QueryTypes } from 'sequelize';
import { db } from '../db/index.ts';
import { uploadLimits } from '../src/lib/server/body-limits.ts';
import { proposeSamePictures } from '../src/lib/server/same-picture.ts';
import { storage } from '../src/lib/server/storage.ts';
import { enginePool } from './engine-pool.ts';

/** How often the worker looks for prints without a fingerprint (jobs/worker.ts). */
export const BACKFILL_EVERY_MS = 10_000;
/** Prints fingerprinted per look. */
const AT_A_TIME = 30;

/** One look: the oldest prints without a fingerprint, each fingerprinted and looked for; how many got one. */
export async function backfillFingerprints(): Promise<number> {
  const rows = await db().query<{ id: string; original_id: string; storage_key: string }>(
    `SELECT i.id, i.original_id, o.storage_key FROM items i JOIN originals o ON o.id = i.original_id
      WHERE i.state = 'ready' AND i.fingerprint IS NULL AND i.deleted_at IS NULL AND least(o.width, o.height) >= 64
      ORDER BY i.created_at LIMIT ${AT_A_TIME}`,
    { type: QueryTypes.SELECT },
  );
  let done = 0;
  for (const r of rows) {
    const fingerprint = await enginePool().fingerprint(await storage().localPath(r.storage_key), uploadLimits()).catch((err) => {
      console.error(`fingerprint ${r.id}: ${(err as Error)?.message ?? err}`);
      return null;
    });
    if (!fingerprint) continue;
    // the scan it was made of must still be the print's (a rescan may have replaced it meanwhile)
    const [, result] = await db().query(`UPDATE items SET fingerprint = ('x' || :fingerprint)::bit(128) WHERE id = :id AND original_id = :originalId AND fingerprint IS NULL`, {
      replacements: { id: r.id, originalId: r.original_id, fingerprint },
    });
    if (((result as { rowCount?: number })?.rowCount ?? 0) === 0) continue;
    await proposeSamePictures(r.id);
    done++;
  }
  if (done) console.log(`worker ${process.pid}: ${done} earlier print(s) given their fingerprint`);
  return done;
}
