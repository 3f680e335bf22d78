/**
 * The analyse queue: one decode per scan gives the analysis, the proposed correction, the
 * full-resolution corrected JPEG and the small copies (the engine's analyseAndRender). Idempotent:
 * files go under deterministic keys and the proposed correction is version 1, made once, so a
 * retried or re-delivered job never adds rows or files.
 */
import type PgBoss from 'pg-boss';
import { Op, QueryTypes } from 'sequelize';
import { Correction, Item, Original, db } from '../db/index.ts';
import { ScanRejected } from '../src/lib/restoration/imaging.ts';
import { uploadLimits } from '../src/lib/server/ingest.ts';
import {
  ANALYSE_QUEUE,
  derivedKeys,
  enqueueAnalyse,
  enqueueBatchSettled,
  PREVIEW_SIDE,
  THUMBNAIL_SIDE,
  type AnalyseJob,
} from '../src/lib/server/processing.ts';
import { queue } from '../src/lib/server/queue.ts';
import { storage } from '../src/lib/server/storage.ts';
import { removeStaleTemporaries } from '../src/lib/server/stale-files.ts';
import { config } from '../src/lib/server/config.ts';
import { eachAtMost } from './each-at-most.ts';
import { enginePool } from './engine-pool.ts';
import type { JobHandler } from './registry.ts';

/** Marks an item failed with a reason fit to show the archivist. */
async function fail(itemId: string, reason: string): Promise<void> {
  await Item.update({ state: 'failed', failureReason: reason.slice(0, 1000) }, { where: { id: itemId, state: { [Op.ne]: 'ready' } } });
}

/** Queues the settling of a batch once none of its items waits for or is in analysis. */
export async function settleIfDone(batchId: string): Promise<void> {
  const pending = await Item.count({ where: { batchId, state: { [Op.in]: ['queued', 'analysing'] } } });
  if (pending === 0) await enqueueBatchSettled(batchId);
}

async function analyseItem(job: PgBoss.JobWithMetadata<AnalyseJob>): Promise<void> {
  const item = (await Item.findByPk(job.data.itemId, { include: [{ model: Original, as: 'original' }] })) as (Item & { original: Original }) | null;
  if (!item) return;
  if (item.state === 'ready' && item.renderKey) return;
  const [claimed] = await Item.update({ state: 'analysing', failureReason: null }, { where: { id: item.id, state: { [Op.in]: ['queued', 'analysing'] } } });
  if (claimed === 0) return;

  const store = storage();
  const started = performance.now();
  try {
    const path = await store.localPath(item.original.storageKey);
    // thumbnails come from the engine's small copy of the decode, not from decoding the previews again
    const result = await engine.analyseAndRender(path, { previews: { preview: PREVIEW_SIDE, thumbnail: THUMBNAIL_SIDE }, limits: uploadLimits() });
    // The next free version: 1 for a new print, later for a print whose scan was replaced
    // (a rescan from the negative). A re-run before the commit below computes the same number
    // and overwrites the same files; after the commit the item is ready and the run stops above.
    const version = ((await Correction.max<number, Correction>('version', { where: { itemId: item.id } })) ?? 0) + 1;
    const keys = {
      render: derivedKeys.render(item.id, version),
      preview: derivedKeys.originalPreview(item.id),
      thumbnail: derivedKeys.originalThumbnail(item.id),
    };
    await store.put(keys.render, result.buffer);
    const engineDone = performance.now();
    const previews = result.previews!;
    await store.put(keys.preview, previews.original.preview!);
    await store.put(keys.thumbnail, previews.original.thumbnail!);
    await store.put(derivedKeys.renderPreview(item.id, version), previews.corrected.preview!);
    await store.put(derivedKeys.renderThumbnail(item.id, version), previews.corrected.thumbnail!);

    const filesDone = performance.now();
    await db().transaction(async (transaction) => {
      const current = await Item.findByPk(item.id, { transaction, lock: transaction.LOCK.UPDATE });
      if (!current || current.state !== 'analysing' || current.originalId !== item.originalId) return;
      // (item_id, version) is unique: a duplicate run that lost the race fails here and rolls back.
      await Correction.create({ itemId: item.id, version, params: result.correction as unknown as Record<string, unknown>, origin: 'proposed', createdBy: null }, { transaction });
      await current.update(
        {
          state: 'ready',
          failureReason: null,
          analysis: result.analysis as unknown as Record<string, unknown>,
          fadeGrade: result.analysis.fadeGrade,
          currentVersion: version,
          thumbKey: keys.thumbnail,
          previewKey: keys.preview,
          renderKey: keys.render,
          renderVersion: version,
        },
        { transaction },
      );
    }).catch((err) => {
      if ((err as Error)?.name === 'SequelizeUniqueConstraintError') return;
      throw err;
    });
    const ms = (a: number, b: number) => Math.round(b - a);
    console.log(`analyse ${item.id}: ${ms(started, performance.now())} ms (engine ${ms(started, engineDone)}, files ${ms(engineDone, filesDone)}, database ${ms(filesDone, performance.now())})`);
  } catch (err) {
    if (err instanceof ScanRejected) {
      // A damaged or cut-short scan stays damaged: no retry, the reason goes to the archivist.
      await fail(item.id, err.message);
    } else if (job.retryCount >= job.retryLimit) {
      await fail(item.id, `Processing failed after ${job.retryCount + 1} attempts: ${(err as Error)?.message ?? err}`);
      await settleIfDone(item.batchId);
      throw err;
    } else {
      throw err;
    }
  }
  await settleIfDone(item.batchId);
}

/** pg-boss only hands on a crashed worker's job once its lease is found expired; look often. */
const SWEEP_SECONDS = 10;
/** An item left queued this long without a job (the process died between commit and send) gets one. */
const STRANDED_AFTER = "interval '2 minutes'";

async function sweep(): Promise<void> {
  const boss = (await queue()) as PgBoss & { expire?: () => Promise<void> };
  await boss.expire?.();
  await removeStaleTemporaries();
  const stranded = await db().query<{ id: string; pixels: number | null; batch_id: string; state: string }>(
    `SELECT i.id, i.batch_id, i.state, (o.width::bigint * o.height) AS pixels
       FROM items i JOIN originals o ON o.id = i.original_id
      WHERE i.state IN ('queued', 'analysing') AND i.updated_at < now() - ${STRANDED_AFTER}
        AND NOT EXISTS (SELECT 1 FROM pgboss.job j WHERE j.name = :queue AND j.data->>'itemId' = i.id::text AND j.state < 'completed')
      LIMIT 200`,
    { replacements: { queue: ANALYSE_QUEUE.name }, type: QueryTypes.SELECT },
  );
  for (const s of stranded) {
    if (s.state === 'queued') {
      await Item.update({ failureReason: null }, { where: { id: s.id } });
      await enqueueAnalyse(s.id, s.pixels === null ? null : Number(s.pixels));
    } else {
      // Its job has used up its attempts while workers were being stopped mid-job.
      await fail(s.id, 'Processing was interrupted too many times. Use "Try again".');
      await settleIfDone(s.batch_id);
    }
  }
}

let sweeping = false;
setInterval(() => {
  if (sweeping) return;
  sweeping = true;
  sweep()
    .catch((err) => console.error('[analyse] sweep failed:', err))
    .finally(() => {
      sweeping = false;
    });
}, SWEEP_SECONDS * 1000).unref();

/**
 * Two images at a time on two cores (WORKER_CONCURRENCY), each on an engine thread of its own:
 * only the decode-analyse-render step holds a thread, so one scan's files and database rows are
 * written while the next scan is already decoding.
 */
const AT_ONCE = config().workerConcurrency;
const engine = enginePool();

/**
 * Two polling loops per worker, each fetching a few jobs at a time: pg-boss waits out the rest
 * of its polling interval after every handler call, and a loop only fetches again once all of
 * its jobs are done. With two loops sharing the engine slots, one loop's next jobs are fetched
 * while the other's last scans still hold the slots, so the cores do not wait on the tail of a fetch.
 */
const FETCH = AT_ONCE + 1;
const LOOPS = 2;

export const analyseHandler: JobHandler = {
  queue: ANALYSE_QUEUE.name,
  concurrency: () => LOOPS,
  // includeMetadata makes pg-boss hand over retryCount and retryLimit with each job.
  workOptions: { includeMetadata: true, batchSize: FETCH },
  handle: (async (jobs: PgBoss.JobWithMetadata<AnalyseJob>[]) => {
    const boss = await queue();
    await eachAtMost(jobs, FETCH, async (job) => {
      try {
        await analyseItem(job);
      } catch (err) {
        // Fail this job alone (pg-boss retries it with backoff); the others of the fetch complete.
        await boss.fail(ANALYSE_QUEUE.name, job.id, { message: String((err as Error)?.message ?? err) });
      }
    });
  }) as PgBoss.WorkHandler<any>,
};
