/**
 * The export queue: writes one export's BagIt zip (src/lib/server/export.ts). One export at a
 * time per worker: an export is long and mostly disk and JPEG work, and the analyses share the cores.
 */
import type PgBoss from 'pg-boss';
import { EXPORT_QUEUE, runExport, type ExportJob } from '../src/lib/server/export.ts';
import type { JobHandler } from './registry.ts';

async function handle(jobs: PgBoss.Job<ExportJob>[]): Promise<void> {
  for (const job of jobs) await runExport(job.data.exportId);
}

export const exportHandler: JobHandler = {
  queue: EXPORT_QUEUE.name,
  handle,
  concurrency: () => 1,
};
