/**
 * A worker's presence in the database: one connection held open for the worker's life, named
 * `drawerlight-worker:<id>` (its application_name, which pg_stat_activity shows every session of
 * the database's role). An item in analysis records the id of the worker holding it
 * (items.analysing_by); when that worker dies, PostgreSQL drops its connection at once, so a worker
 * that starts (or sweeps) can tell the analyses a dead worker left half done from those a live
 * worker is running, and queue them again without waiting for the queue's lease to run out.
 * Queuing a live worker's item by mistake (its presence connection lost for a moment) costs one
 * decode: the analyse job is idempotent.
 */
import { randomUUID } from 'node:crypto';
import pg from 'pg';
import { QueryTypes } from 'sequelize';
import { db } from '../db/index.ts';
import { config } from '../src/lib/server/config.ts';
import { enqueueAnalyse, enqueueBatchSettled } from '../src/lib/server/processing.ts';

/** The application_name prefix of every worker's presence connection. */
export const PRESENCE_PREFIX = 'drawerlight-worker:';

/** This worker process's id, as items.analysing_by records it. */
export const WORKER_ID = randomUUID();

/** A scan whose analysis has taken its worker down this often is marked failed, not queued again. */
export const MAX_INTERRUPTIONS = 3;

const RECONNECT_MS = 1000;

let client: pg.Client | undefined;
let stopped = false;

async function connect(): Promise<void> {
  const c = new pg.Client({ connectionString: config().databaseUrl, application_name: `${PRESENCE_PREFIX}${WORKER_ID}`, keepAlive: true });
  c.on('error', (err) => {
    console.error(`worker presence: connection lost (${err.message}); connecting again`);
    if (client === c) client = undefined;
    c.end().catch(() => undefined);
    if (!stopped) setTimeout(() => void connectRetrying(), RECONNECT_MS).unref();
  });
  await c.connect();
  client = c;
}

async function connectRetrying(): Promise<void> {
  while (!stopped && !client) {
    try {
      await connect();
    } catch (err) {
      console.error(`worker presence: cannot connect (${(err as Error).message}); trying again`);
      await new Promise((r) => setTimeout(r, RECONNECT_MS));
    }
  }
}

/** Opens the presence connection (before the worker claims any item). */
export async function startPresence(): Promise<void> {
  stopped = false;
  await connectRetrying();
}

/** Closes the presence connection (the worker is stopping). */
export async function stopPresence(): Promise<void> {
  stopped = true;
  const c = client;
  client = undefined;
  await c?.end().catch(() => undefined);
}

/**
 * Queues again every item held in analysis by a worker that is gone (no session of that name), and
 * marks failed the few that have cut their worker short MAX_INTERRUPTIONS times. Returns how many
 * were queued again. Safe to run from several workers at once: the rows are taken with SKIP LOCKED.
 */
export async function requeueInterrupted(): Promise<{ queued: number; failed: number }> {
  const rows = await db().query<{ id: string; batch_id: string; state: 'queued' | 'failed'; pixels: string | null }>(
    `WITH gone AS (
       SELECT i.id FROM items i
        WHERE i.state = 'analysing' AND i.deleted_at IS NULL
          AND (i.analysing_by IS NULL
               OR NOT EXISTS (SELECT 1 FROM pg_stat_activity a WHERE a.application_name = :prefix || i.analysing_by))
        FOR UPDATE SKIP LOCKED)
     UPDATE items i
        SET state = CASE WHEN i.interruptions + 1 >= :max THEN 'failed'::enum_items_state ELSE 'queued'::enum_items_state END,
            failure_reason = CASE WHEN i.interruptions + 1 >= :max THEN :reason ELSE NULL END,
            interruptions = i.interruptions + 1, analysing_by = NULL, updated_at = now()
       FROM gone, originals o
      WHERE i.id = gone.id AND o.id = i.original_id
    RETURNING i.id, i.batch_id, i.state, (o.width::bigint * o.height) AS pixels`,
    {
      replacements: { prefix: PRESENCE_PREFIX, max: MAX_INTERRUPTIONS, reason: `Processing was interrupted ${MAX_INTERRUPTIONS} times (its worker stopped each time). Use "Try again".` },
      type: QueryTypes.SELECT,
    },
  );
  for (const r of rows) if (r.state === 'queued') await enqueueAnalyse(r.id, r.pixels === null ? null : Number(r.pixels));
  for (const batchId of new Set(rows.filter((r) => r.state === 'failed').map((r) => r.batch_id))) await enqueueBatchSettled(batchId);
  const queued = rows.filter((r) => r.state === 'queued').length;
  if (rows.length) console.log(`worker ${process.pid}: ${queued} analysis(es) cut short by a stopped worker queued again, ${rows.length - queued} marked failed`);
  return { queued, failed: rows.length - queued };
}
