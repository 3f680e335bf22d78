/**
 * The job worker: one process that runs every queue's handler. `npm start` runs one;
 * `npm run worker` runs another alone (several may run at once; pg-boss hands each job to one).
 */
import type PgBoss from 'pg-boss';
import { closeDb } from '../db/index.ts';
import { openDatabase } from '../src/lib/server/database.ts';
import { imagingForLongRuns } from '../src/lib/restoration/imaging.ts';
import { config } from '../src/lib/server/config.ts';
import { queue, stopQueue } from '../src/lib/server/queue.ts';
import { HANDLERS } from './registry.ts';
import { registerLoop } from './loops.ts';
import { FEED_EVERY_MS, feedRendersSoon } from './render.ts';
import { oneAtATime } from './each-at-most.ts';
import { reconcileOriginals } from '../src/lib/server/reconcile.ts';
import { schedulePurge } from './purge-removed.ts';
import { requeueInterrupted, startPresence, stopPresence } from './presence.ts';
import { sweepAnalyses } from './analyse.ts';
import { BACKFILL_EVERY_MS, backfillFingerprints } from './fingerprints.ts';
import { RESUME_EXPORTS_EVERY_MS, resumeExports } from './export.ts';

// no libvips cache in this long-running process (its engine threads and export processes set their own)
imagingForLongRuns();

openDatabase();

const RECONCILE_MINUTES = 10;
/** pg-boss hands on a killed worker's job only once its lease is found expired; the worker's own sweep looks often. */
const ANALYSE_SWEEP_MS = 10_000;

/**
 * pg-boss 10 completes and fails jobs without awaiting the call (its manager's onFetch), so one that
 * meets a database restart becomes an unhandled rejection, which would end the worker. A lost
 * connection is survivable: the pools reconnect on the next query, pg-boss hands an unfinished job
 * on again when its lease runs out, and every handler is idempotent. Anything else still ends it.
 */
const CONNECTION_LOST = /ECONNREFUSED|ECONNRESET|ETIMEDOUT|EPIPE|57P0[123]|terminating connection|Connection terminated|the database system is (starting up|shutting down)|not queryable/i;
process.on('unhandledRejection', (reason) => {
  const text = `${(reason as Error)?.message ?? reason} ${(reason as { code?: string })?.code ?? ''}`;
  if (CONNECTION_LOST.test(text)) {
    console.error(`worker ${process.pid}: lost the database connection (${text.trim().slice(0, 200)}); carrying on`);
    return;
  }
  console.error(reason);
  process.exit(1);
});
const c = config();
// present before any item is claimed, so no other worker takes this one's analyses for a dead worker's
await startPresence();
const boss = await queue();
/**
 * One polling loop of a queue. pg-boss waits out the rest of its polling interval (0.5 s at least)
 * after each fetch, jobs found or not; a loop that found jobs asks for more at once instead
 * (notifyWorker), so a busy queue is worked at the speed of its handler, not of the interval.
 */
async function loop(h: (typeof HANDLERS)[number]): Promise<void> {
  let id = '';
  const handle = async (jobs: PgBoss.Job[]) => {
    await h.handle(jobs as Parameters<typeof h.handle>[0]);
    if (jobs.length > 0 && id) boss.notifyWorker(id);
  };
  id = await boss.work(h.queue, { batchSize: 1, pollingIntervalSeconds: 0.5, ...(h.workOptions ?? {}) }, handle as PgBoss.WorkHandler<unknown>);
  registerLoop(h.queue, id);
}
for (const h of HANDLERS) {
  for (let i = 0; i < (h.concurrency?.(c) ?? 1); i++) await loop(h);
}
// Analyses a worker cut short (killed, or the machine stopped) are queued again now, not when their
// lease runs out; batch-settled measures its quiet period from this start too (jobs/batch-settled.ts).
await requeueInterrupted();

/** Every timer of the worker, here and nowhere else: each call skipped while the previous one runs. */
function every(label: string, ms: number, fn: () => Promise<unknown>, now = false): void {
  const run = oneAtATime(label, fn);
  if (now) run();
  setInterval(run, ms).unref();
}
// full-size renders, once the analyses leave the machine free (jobs/render.ts)
setInterval(feedRendersSoon, FEED_EVERY_MS).unref();
// analyses cut short, stranded items, stale temporary files (jobs/analyse.ts)
every('analyse: sweep', ANALYSE_SWEEP_MS, sweepAnalyses);
// fingerprints of prints analysed before they were kept (jobs/fingerprints.ts)
every('fingerprints: earlier prints', BACKFILL_EVERY_MS, backfillFingerprints, true);
// exports a stopped worker left running (jobs/export.ts)
every('export: resuming stalled exports', RESUME_EXPORTS_EVERY_MS, resumeExports);
// Originals an upload cut short by a database outage left without a row: listed and logged, at
// start and every few minutes (src/lib/server/reconcile.ts).
every('reconcile storage', RECONCILE_MINUTES * 60_000, reconcileOriginals, true);
await schedulePurge();
console.log(`worker ${process.pid}: working on ${HANDLERS.map((h) => h.queue).join(', ') || 'no queues yet'}`);

let stopping = false;
async function shutdown() {
  if (stopping) return;
  stopping = true;
  await stopQueue();
  await stopPresence();
  await closeDb();
  process.exit(0);
}
process.on('SIGTERM', shutdown);
process.on('SIGINT', shutdown);
