/**
 * The export queue: writes one export's BagIt zip (src/lib/server/export.ts). One export at a
 * time per worker: an export is long and mostly disk and JPEG work, and the analyses share the cores.
 */
import type PgBoss from 'pg-boss';
import { config } from '../src/lib/server/config.ts';
import { EXPORT_QUEUE, resumeStalledExports, runExport, type ExportJob } from '../src/lib/server/export.ts';
import type { JobHandler } from './registry.ts';

async function handle(jobs: PgBoss.Job<ExportJob>[]): Promise<void> {
  for (const job of jobs) await runExport(job.data.exportId);
}

// Exports left running by a killed worker are picked up again by whichever worker looks next.
const every = Math.min(60_000, Math.max(1000, config().exportStallMs / 2));
setInterval(() => {
  resumeStalledExports()
    .then((n) => n && console.log(`[export] resumed ${n} export(s) left by a stopped worker`))
    .catch((err) => console.error('[export] looking for stalled exports failed:', err));
}, every).unref();

export const exportHandler: JobHandler = {
  queue: EXPORT_QUEUE.name,
  handle,
  concurrency: () => 1,
};
