/**
 * The analyse queue: one decode per scan gives the analysis, the proposed correction and the small
 * copies of the original and of the proposal (the engine's analyseForReview); the item is then ready
 * for review, and its full-resolution corrected JPEG is the render queue's work. Idempotent:
 * files go under deterministic keys and the proposed correction is version 1, made once, so a
 * retried or re-delivered job never adds rows or files.
 */
import type PgBoss from 'pg-boss';
import { Op, QueryTypes } from 'sequelize';
import { Correction, Item, db } from '../db/index.ts';
import { ScanRejected } from '../src/lib/restoration/imaging.ts';
import { uploadLimits } from '../src/lib/server/body-limits.ts';
import {
  ANALYSE_QUEUE,
  derivedKeys,
  enqueueAnalyse,
  enqueueBatchSettled,
  PREVIEW_SIDE,
  THUMBNAIL_SIDE,
  type AnalyseJob,
} from '../src/lib/server/processing.ts';
import { backKeys, isBackScan, keepAsBack, pairWaitingBacks } from '../src/lib/server/backs.ts';
import { queue } from '../src/lib/server/queue.ts';
import { proposeSamePictures } from '../src/lib/server/same-picture.ts';
import { storage } from '../src/lib/server/storage.ts';
import { removeStaleTemporaries } from '../src/lib/server/stale-files.ts';
import { config } from '../src/lib/server/config.ts';
import { eachAtMost } from './each-at-most.ts';
import { enginePool } from './engine-pool.ts';
import { PRESENCE_PREFIX, requeueInterrupted, WORKER_ID } from './presence.ts';
import { enqueueReadBack } from './read-back.ts';
import type { JobHandler } from './registry.ts';

/** How a print whose scan cannot be decoded cleanly (corrupt or cut short) is marked, before the reason. */
export const DAMAGED_SCAN = 'Damaged scan: rescan advised.';

/** Marks an item failed with a reason fit to show the archivist. */
async function fail(itemId: string, reason: string): Promise<void> {
  await Item.update({ state: 'failed', failureReason: reason.slice(0, 1000) }, { where: { id: itemId, state: { [Op.ne]: 'ready' } } });
}

/** Queues the settling of a batch once none of its items waits for or is in analysis. */
export async function settleIfDone(batchId: string): Promise<void> {
  const pending = await Item.count({ where: { batchId, state: { [Op.in]: ['queued', 'analysing'] } } });
  if (pending === 0) await enqueueBatchSettled(batchId);
}

/** Prints a job of this process is analysing now. */
const inHand = new Set<string>();

async function analyseItem(job: PgBoss.JobWithMetadata<AnalyseJob>): Promise<void> {
  const id = job.data.itemId;
  // a second job for a print this process is analysing already leaves it to the first
  if (inHand.has(id)) return;
  inHand.add(id);
  try {
    await claimAndAnalyse(job);
  } finally {
    inHand.delete(id);
  }
}

async function claimAndAnalyse(job: PgBoss.JobWithMetadata<AnalyseJob>): Promise<void> {
  // Claimed in one statement: a queued item, one held by a worker that is gone (its presence
  // connection closed, jobs/presence.ts), or one this worker holds from an earlier attempt that
  // could not hand it back (the database was away; no job of this process holds it now). An item
  // another live worker holds is left to it, so a scan is analysed once however many jobs name
  // it; analysis_runs counts the claims.
  const [claimed] = await db().query<{ id: string; batch_id: string; original_id: string; storage_key: string }>(
    `UPDATE items i SET state = 'analysing', failure_reason = NULL, analysing_by = :worker, analysis_runs = i.analysis_runs + 1, updated_at = now()
       FROM originals o
      WHERE i.id = :id AND o.id = i.original_id AND i.deleted_at IS NULL
        AND (i.state = 'queued'
             OR (i.state = 'analysing'
                 AND (i.analysing_by IS NULL OR i.analysing_by = :worker
                      OR NOT EXISTS (SELECT 1 FROM pg_stat_activity a WHERE a.application_name = :prefix || i.analysing_by))))
    RETURNING i.id, i.batch_id, i.original_id, o.storage_key`,
    { replacements: { id: job.data.itemId, worker: WORKER_ID, prefix: PRESENCE_PREFIX }, type: QueryTypes.SELECT },
  );
  if (!claimed) return;
  const item = { id: claimed.id, batchId: claimed.batch_id, originalId: claimed.original_id };

  const store = storage();
  const started = performance.now();
  try {
    const path = await store.localPath(claimed.storage_key);
    // the original's preview is made on demand (api/items/:id/preview?of=original): nothing shows it by default
    const result = await engine.analyseForReview(path, { previews: { preview: PREVIEW_SIDE, thumbnail: THUMBNAIL_SIDE, originalThumbnailOnly: true }, limits: uploadLimits() });
    if (await isBackScan(item.id, result.back)) {
      // the back of a print: kept with its small copies as scanned, never corrected or reviewed
      const keys = { preview: result.previews.original.preview ? backKeys.preview(item.id) : null, thumbnail: backKeys.thumbnail(item.id) };
      await Promise.all([keys.preview ? store.put(keys.preview, result.previews.original.preview!) : undefined, store.put(keys.thumbnail, result.previews.original.thumbnail!)]);
      const backId = await keepAsBack({ itemId: item.id, originalId: item.originalId, measure: result.back, keys }, WORKER_ID);
      // its text is read on a queue of its own, after the review's work
      if (backId) await enqueueReadBack(backId);
      await settleIfDone(item.batchId);
      return;
    }
    // The next free version: 1 for a new print, later for a print whose scan was replaced
    // (a rescan from the negative). A re-run before the commit below computes the same number
    // and overwrites the same files; after the commit the item is ready and the run stops above.
    const version = ((await Correction.max<number, Correction>('version', { where: { itemId: item.id } })) ?? 0) + 1;
    const keys = { preview: derivedKeys.originalPreview(item.id), thumbnail: derivedKeys.originalThumbnail(item.id) };
    const engineDone = performance.now();
    const { original, corrected } = result.previews;
    await Promise.all([
      original.preview ? store.put(keys.preview, original.preview) : undefined,
      store.put(keys.thumbnail, original.thumbnail!),
      store.put(derivedKeys.renderPreview(item.id, version), corrected.preview!),
      store.put(derivedKeys.renderThumbnail(item.id, version), corrected.thumbnail!),
    ]);

    const filesDone = performance.now();
    // Ready for review, and its proposed correction recorded, in one statement: both or neither.
    // Only the run that holds the item in analysis, for the scan it measured, gets there; a
    // duplicate run that lost the race meets the unique (item_id, version) and changes nothing.
    // The full-size corrected JPEG follows on the render queue (jobs/render.ts).
    await db()
      .query(
        `WITH done AS (
           UPDATE items SET state = 'ready', failure_reason = NULL, analysing_by = NULL, analysis = :analysis::jsonb, fade_grade = :grade,
                  current_version = :version, thumb_key = :thumb, preview_key = :preview, preview_version = :version,
                  fingerprint = ('x' || :fingerprint)::bit(128), updated_at = now()
            WHERE id = :id AND state = 'analysing' AND original_id = :originalId
           RETURNING id)
         INSERT INTO corrections (id, item_id, version, params, origin, created_by, created_at)
         SELECT gen_random_uuid(), id, :version, :params::jsonb, 'proposed', NULL, now() FROM done`,
        {
          replacements: {
            id: item.id,
            originalId: item.originalId,
            version,
            analysis: JSON.stringify(result.analysis),
            grade: result.analysis.fadeGrade,
            thumb: keys.thumbnail,
            preview: original.preview ? keys.preview : null,
            params: JSON.stringify(result.correction),
            fingerprint: result.fingerprint,
          },
        },
      )
      .catch((err) => {
        if ((err as Error)?.name === 'SequelizeUniqueConstraintError') return;
        throw err;
      });
    // other scans of the same picture in the archive, proposed to the editor (the print is ready
    // either way: a look-up that fails leaves it without proposals, never unanalysed)
    await proposeSamePictures(item.id).catch((err) => console.error(`same picture ${item.id}: ${(err as Error)?.message ?? err}`));
    const ms = (a: number, b: number) => Math.round(b - a);
    console.log(`analyse ${item.id}: ${ms(started, performance.now())} ms (engine ${ms(started, engineDone)}, files ${ms(engineDone, filesDone)}, database ${ms(filesDone, performance.now())})`);
  } catch (err) {
    if (err instanceof ScanRejected) {
      // A damaged or cut-short scan stays damaged: no retry, the reason goes to the archivist, and
      // the original is kept as it came (the scanner or the copy is to blame, not the print).
      await fail(item.id, err.code === 'unreadable' ? `${DAMAGED_SCAN} ${err.message}` : err.message);
    } else if (job.retryCount >= job.retryLimit) {
      await fail(item.id, `Processing failed after ${job.retryCount + 1} attempts: ${(err as Error)?.message ?? err}`);
      await settleIfDone(item.batchId);
      throw err;
    } else {
      // Handed back for the job's retry (pg-boss, with backoff), which claims it as any queued item.
      await Item.update({ state: 'queued', analysingBy: null }, { where: { id: item.id, state: 'analysing', analysingBy: WORKER_ID } });
      throw err;
    }
  }
  // a back that came before its front (by name) finds it now
  await pairWaitingBacks(item.batchId);
  await settleIfDone(item.batchId);
}

/**
 * Prints this worker holds in analysis that no job of this process is analysing: a claim whose
 * job then lost the database before it could hand the print back (or whose answer was lost on
 * the way). pg-boss would retry that job only when its lease runs out (expireInSeconds), so they
 * are queued again now, with a job of their own. A claim younger than a minute is left alone: its
 * job may have claimed it while this sweep was reading which prints are in hand.
 */
async function handBackOrphans(): Promise<void> {
  const rows = await db().query<{ id: string; pixels: string | null }>(
    `UPDATE items i SET state = 'queued', analysing_by = NULL, updated_at = now()
       FROM originals o
      WHERE o.id = i.original_id AND i.state = 'analysing' AND i.analysing_by = :worker AND i.deleted_at IS NULL
        AND i.updated_at < now() - interval '1 minute' AND NOT (i.id::text = ANY(string_to_array(:inHand, ',')))
    RETURNING i.id, (o.width::bigint * o.height) AS pixels`,
    { replacements: { worker: WORKER_ID, inHand: [...inHand].join(',') }, type: QueryTypes.SELECT },
  );
  for (const r of rows) await enqueueAnalyse(r.id, r.pixels === null ? null : Number(r.pixels));
  if (rows.length) console.log(`worker ${process.pid}: ${rows.length} analysis(es) this worker could not hand back queued again`);
}

/** An item left queued this long with no job sent since (its process stopped between commit and send) gets one. */
const STRANDED_AFTER = "interval '2 minutes'";

/**
 * The analyse queue's sweep (jobs/worker.ts runs it every few seconds): stale temporary files
 * removed, analyses a stopped worker left half done queued again at once, and items whose job
 * was never sent given one. What was sent is read from our own rows (items.analyse_sent_at), so
 * an item queued again after its job was sent (a caption typed meanwhile) may get a second job,
 * which finds it taken and does nothing.
 */
export async function sweepAnalyses(): Promise<void> {
  await removeStaleTemporaries();
  await requeueInterrupted();
  await handBackOrphans();
  const stranded = await db().query<{ id: string; pixels: number | null }>(
    `SELECT i.id, (o.width::bigint * o.height) AS pixels
       FROM items i JOIN originals o ON o.id = i.original_id
      WHERE i.state = 'queued' AND i.deleted_at IS NULL AND i.updated_at < now() - ${STRANDED_AFTER}
        AND (i.analyse_sent_at IS NULL OR i.analyse_sent_at < i.updated_at)
      LIMIT 200`,
    { type: QueryTypes.SELECT },
  );
  for (const s of stranded) await enqueueAnalyse(s.id, s.pixels === null ? null : Number(s.pixels));
}

/**
 * Two images at a time on two cores (WORKER_CONCURRENCY), each on an engine thread of its own:
 * only the decode-and-measure step holds a thread, so one scan's files and database rows are
 * written while the next scan is already decoding.
 */
const AT_ONCE = config().workerConcurrency;
const engine = enginePool();

/**
 * Two polling loops per worker, each fetching a few jobs at a time and fetching again as soon as
 * they are done (jobs/worker.ts): with two loops sharing the engine slots, one loop's next jobs
 * are fetched while the other's last scans still hold the slots, so the cores do not wait on a fetch.
 */
const FETCH = AT_ONCE + 1;
const LOOPS = 2;

export const analyseHandler: JobHandler<'analyse'> = {
  queue: ANALYSE_QUEUE.name,
  concurrency: () => LOOPS,
  // includeMetadata makes pg-boss hand over retryCount and retryLimit with each job.
  workOptions: { includeMetadata: true, batchSize: FETCH },
  handle: async (jobs) => {
    const boss = await queue();
    await eachAtMost(jobs, FETCH, async (job) => {
      try {
        await analyseItem(job);
      } catch (err) {
        // Fail this job alone (pg-boss retries it with backoff); the others of the fetch complete.
        await boss.fail(ANALYSE_QUEUE.name, job.id, { message: String((err as Error)?.message ?? err) });
      }
    });
  },
};
