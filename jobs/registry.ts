import type PgBoss from 'pg-boss';
import type { AppConfig } from '../src/lib/server/config.ts';
import { analyseHandler } from './analyse.ts';
import { renderHandler } from './render.ts';
import { batchSettledHandler } from './batch-settled.ts';
import { exportHandler } from './export.ts';
import { purgeRemovedHandler } from './purge-removed.ts';
import { mailHandler } from './mail.ts';

/** One queue's handler as the worker registers it. */
export interface JobHandler {
  queue: string;
  handle: PgBoss.WorkHandler<any>;
  /** How many of this queue's jobs one worker runs at a time. */
  concurrency?: (c: AppConfig) => number;
  workOptions?: PgBoss.WorkOptions;
}

/** Every handler the worker runs; each lives in its own file under jobs/. */
export const HANDLERS: JobHandler[] = [];
HANDLERS.push(analyseHandler, renderHandler, batchSettledHandler);
HANDLERS.push(exportHandler);
HANDLERS.push(purgeRemovedHandler);
HANDLERS.push(mailHandler);
