/**
 * The render queue: the full-resolution corrected JPEG of one correction version
 * (src/lib/server/renders.ts). An item is ready for review before it has one; this file also feeds
 * the queue. The feeder sends render jobs once nothing waits for analysis and no scan has arrived
 * for RENDER_QUIET_SECONDS, so a sitting's scans are all analysed first (and a print ready for
 * more than RENDER_CATCH_UP_SECONDS is rendered even while a long sitting goes on). It keeps a
 * few jobs waiting at a time, so a new sitting never finds hundreds of renders ahead of it.
 */
import { QueryTypes } from 'sequelize';
import { db } from '../db/index.ts';
import { RENDER_CATCH_UP_SECONDS, RENDER_QUEUE, RENDER_QUIET_SECONDS, requestRender } from '../src/lib/server/processing.ts';
import { renderItemVersion } from '../src/lib/server/renders.ts';
import { config } from '../src/lib/server/config.ts';
import { queue } from '../src/lib/server/queue.ts';
import { eachAtMost, oneAtATime } from './each-at-most.ts';
import { enginePool } from './engine-pool.ts';
import { wakeLoops } from './loops.ts';
import type { JobHandler } from './registry.ts';

/** Render jobs kept waiting in the queue: enough for every polling loop of a couple of workers. */
const WAITING_TARGET = 8;
/**
 * A print marked as sent this long ago whose job is nowhere (its worker stopped between marking and
 * sending) is sent again; looked for every LOST_EVERY_MS.
 */
const LOST_AFTER = "interval '30 seconds'";
const LOST_EVERY_MS = 15_000;
let lostLookedAt = 0;

/** Sends render jobs for prints that lack a render of their current version, when the machine is free for it. */
export async function feedRenders(): Promise<number> {
  const [{ busy }] = await db().query<{ busy: boolean }>(
    `SELECT EXISTS (SELECT 1 FROM items WHERE state IN ('queued', 'analysing'))
            OR EXISTS (SELECT 1 FROM items WHERE created_at > now() - make_interval(secs => :quiet)) AS busy`,
    { replacements: { quiet: RENDER_QUIET_SECONDS }, type: QueryTypes.SELECT },
  );
  // jobs waiting to start (created, or failed and waiting for their retry)
  const waiting = await (await queue()).getQueueSize(RENDER_QUEUE.name, { before: 'active' });
  const room = (busy ? 2 : WAITING_TARGET) - waiting;
  if (room <= 0) return 0;
  if (Date.now() - lostLookedAt > LOST_EVERY_MS) {
    lostLookedAt = Date.now();
    // A job once sent is pg-boss's to retry or to have ended (a scan that no longer decodes ends its
    // job without a render): only a version marked as asked for whose job was never sent goes again.
    await db().query(
      `UPDATE items i SET render_queued_version = NULL
        WHERE i.render_queued_version > COALESCE(i.render_version, 0) AND i.render_queued_at < now() - ${LOST_AFTER}
          AND (i.render_sent_at IS NULL OR i.render_sent_at < i.render_queued_at)`,
    );
  }
  const wanted = await db().query<{ id: string; current_version: number }>(
    `SELECT id, current_version FROM items
      WHERE state = 'ready' AND current_version IS NOT NULL AND (render_version IS NULL OR render_version < current_version) AND deleted_at IS NULL
        AND (render_queued_version IS NULL OR render_queued_version < current_version)
        ${busy ? 'AND updated_at < now() - make_interval(secs => :catchUp)' : ''}
      ORDER BY updated_at LIMIT :room`,
    { replacements: { room, catchUp: RENDER_CATCH_UP_SECONDS }, type: QueryTypes.SELECT },
  );
  let sent = 0;
  for (const w of wanted) if (await requestRender(w.id, w.current_version)) sent++;
  if (sent > 0) await wakeLoops(RENDER_QUEUE.name);
  return sent;
}

const feedSoon = oneAtATime('render: feeding the queue', feedRenders);

/** How often the worker feeds the render queue (jobs/worker.ts). */
export const FEED_EVERY_MS = 1000;
/** One feeding at a time, for the worker's timer and for a handler that has just finished renders. */
export { feedSoon as feedRendersSoon };

const engine = enginePool();
const renderer = engine.renderCorrected.bind(engine);
const AT_ONCE = config().workerConcurrency;

export const renderHandler: JobHandler<'render'> = {
  queue: RENDER_QUEUE.name,
  // two polling loops of a few jobs each, sharing the engine threads (as jobs/analyse.ts)
  concurrency: () => 2,
  workOptions: { batchSize: AT_ONCE + 1 },
  handle: async (jobs) => {
    const boss = await queue();
    await eachAtMost(jobs, AT_ONCE + 1, async (job) => {
      try {
        await renderItemVersion(job.data.itemId, job.data.version, renderer);
      } catch (err) {
        // Fail this job alone (pg-boss retries it with backoff); the others of the fetch complete.
        await boss.fail(RENDER_QUEUE.name, job.id, { message: String((err as Error)?.message ?? err) });
      }
    });
    feedSoon();
  },
};
