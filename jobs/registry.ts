/**
 * Every queue's handler, one per queue of the contract (src/lib/server/queues.ts): the type refuses
 * a queue without one. Each handler lives in its own file under jobs/ and starts nothing when it is
 * imported; the worker (jobs/worker.ts) starts the polling loops and the timers.
 */
import type PgBoss from 'pg-boss';
import type { AppConfig } from '../src/lib/server/config.ts';
import type { JobData, WorkedQueue } from '../src/lib/server/queues.ts';
import { analyseHandler } from './analyse.ts';
import { renderHandler } from './render.ts';
import { batchSettledHandler } from './batch-settled.ts';
import { exportHandler } from './export.ts';
import { purgeRemovedHandler } from './purge-removed.ts';
import { mailHandler } from './mail.ts';
import { readBackHandler } from './read-back.ts';

/** One queue's handler as the worker registers it. */
export interface JobHandler<N extends WorkedQueue = WorkedQueue> {
  queue: N;
  handle: (jobs: PgBoss.JobWithMetadata<JobData[N]>[]) => Promise<void>;
  /** How many polling loops of this queue one worker runs. */
  concurrency?: (c: AppConfig) => number;
  workOptions?: PgBoss.WorkOptions;
}

const BY_QUEUE: { [N in WorkedQueue]: JobHandler<N> } = {
  analyse: analyseHandler,
  render: renderHandler,
  'batch-settled': batchSettledHandler,
  export: exportHandler,
  mail: mailHandler,
  'purge-removed': purgeRemovedHandler,
  'read-back': readBackHandler,
};

/** Every handler the worker runs. */
export const HANDLERS: JobHandler[] = Object.values(BY_QUEUE) as JobHandler[];
