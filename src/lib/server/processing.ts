/**
 * The calls that put a batch's processing on its queues (the queues themselves are declared in
 * queues.ts). What was sent is recorded on the item (analyse_sent_at, render_sent_at), so the
 * worker's sweeps find work whose sending was cut short from our own tables, never pg-boss's.
 */
import { QueryTypes } from 'sequelize';
import { db } from '../../../db/index.ts';
import { ANALYSIS_SIDE } from '../restoration/scan-sizes.ts';
import { ANALYSE_QUEUE, BATCH_SETTLED_QUEUE, RENDER_QUEUE, type AnalyseJob, type BatchSettledJob, type RenderJob } from './queues.ts';
import { sendJob } from './queue.ts';

export { ANALYSE_QUEUE, BATCH_SETTLED_QUEUE, RENDER_QUEUE, type AnalyseJob, type BatchSettledJob, type RenderJob };

/**
 * A lease long enough for the slowest honest decode of a scan this size (about 2 s per
 * megapixel on one shared core, with a floor), short enough that a crashed worker's job is
 * handed to another worker soon: pg-boss retries a job whose lease ran out.
 */
export function leaseSeconds(pixels: number | null | undefined): number {
  const mp = (pixels ?? 0) / 1e6;
  return Math.min(1800, Math.max(30, Math.ceil(30 + 2 * mp)));
}

/** Queues the analysis of an item, and records when it was sent (jobs/analyse.ts sends again an item left queued without one). */
export async function enqueueAnalyse(itemId: string, pixels?: number | null): Promise<void> {
  await sendJob(ANALYSE_QUEUE.name, { itemId }, { expireInSeconds: leaseSeconds(pixels) });
  await db().query('UPDATE items SET analyse_sent_at = clock_timestamp() WHERE id = :itemId', { replacements: { itemId } });
}

/**
 * Full-size renders wait while scans are coming in: the feeder (jobs/render.ts) sends them once
 * nothing waits for analysis and no scan has arrived for this long, so the prints of a sitting
 * reach "ready for review" first. A print ready for longer than RENDER_CATCH_UP_SECONDS is
 * rendered even during a long sitting, a couple at a time.
 */
export const RENDER_QUIET_SECONDS = 2;
export const RENDER_CATCH_UP_SECONDS = 60;

/**
 * Sends a render job for `version` of an item unless one was sent for it or a newer version
 * already (render_queued_version), so the feeders of several workers and an operator's save
 * send one job per version. Returns whether a job was sent.
 */
export async function requestRender(itemId: string, version: number): Promise<boolean> {
  const rows = await db().query<{ pixels: string | null }>(
    `UPDATE items i SET render_queued_version = :version, render_queued_at = now()
       FROM originals o
      WHERE i.id = :itemId AND o.id = i.original_id AND (i.render_queued_version IS NULL OR i.render_queued_version < :version)
    RETURNING (o.width::bigint * o.height) AS pixels`,
    { replacements: { itemId, version }, type: QueryTypes.SELECT },
  );
  if (rows.length === 0) return false;
  await enqueueRender(itemId, version, rows[0].pixels === null ? null : Number(rows[0].pixels));
  return true;
}

/**
 * Queues a full-resolution render of one correction version of an item (use {@link requestRender}),
 * and records that it was sent: a version marked as asked for but never sent (its process stopped in
 * between) is asked for again by jobs/render.ts.
 */
export async function enqueueRender(itemId: string, version: number, pixels?: number | null): Promise<void> {
  await sendJob(RENDER_QUEUE.name, { itemId, version }, { expireInSeconds: leaseSeconds(pixels) });
  await db().query('UPDATE items SET render_sent_at = clock_timestamp() WHERE id = :itemId AND render_queued_version = :version', { replacements: { itemId, version } });
}

/**
 * Queues the settling of a batch. Several workers finishing the last analyses at once may each
 * ask; the handler locks the batch row, so the work is done once however many jobs arrive.
 */
export async function enqueueBatchSettled(batchId: string, afterSeconds = 0): Promise<void> {
  await sendJob(BATCH_SETTLED_QUEUE.name, { batchId }, afterSeconds > 0 ? { startAfter: Math.ceil(afterSeconds) } : {});
}

/**
 * A batch counts as finished once nothing in it waits for analysis and no scan has been added
 * for this long: a worker faster than the scanner (or than a slow upload) empties the queue
 * between two files, and the archivist should hear once, about the whole sitting.
 */
export const BATCH_QUIET_SECONDS = 20;

/** Storage keys of an item's derived files: deterministic, so a retried job overwrites instead of adding. */
export const derivedKeys = {
  originalPreview: (itemId: string) => `previews/${itemId}/original.jpg`,
  originalThumbnail: (itemId: string) => `thumbnails/${itemId}/original.jpg`,
  render: (itemId: string, version: number) => `renders/${itemId}/v${version}.jpg`,
  renderPreview: (itemId: string, version: number) => `previews/${itemId}/v${version}.jpg`,
  renderThumbnail: (itemId: string, version: number) => `thumbnails/${itemId}/v${version}.jpg`,
};

/**
 * Long sides of the small copies made from the analysis decode. The preview is the engine's
 * analysis copy itself, encoded: one reduction serves both.
 */
export const PREVIEW_SIDE = ANALYSIS_SIDE;
export const THUMBNAIL_SIDE = 360;
