/**
 * The export queue: writes one export's BagIt zip (src/lib/server/export/job.ts). One export at a
 * time per worker: an export is long and mostly disk and JPEG work, and the analyses share the cores.
 * Each export runs in a child process that ends with it (jobs/export-run.ts), so the worker's own
 * memory stays what its analyses need (an export once left the worker holding 9 GB).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import path from 'node:path';
import type PgBoss from 'pg-boss';
import { config } from '../src/lib/server/config.ts';
import { EXPORT_QUEUE, resumeStalledExports, type ExportJob } from '../src/lib/server/export/queue.ts';
import type { JobHandler } from './registry.ts';

const running = new Set<ChildProcess>();
// An export process outlives neither a worker that stops nor one that crashes on an error.
process.on('exit', () => {
  for (const child of running) child.kill('SIGTERM');
});

/**
 * The environment of an export process: the worker's, without its jemalloc settings, which keep
 * freed memory for the next scan (right for the analyses, not for a one-off pass over gigabytes).
 */
function exportEnv(env: NodeJS.ProcessEnv): NodeJS.ProcessEnv {
  const { LD_PRELOAD: _preload, MALLOC_CONF: _conf, ...rest } = env;
  return rest;
}

/** Runs one export in a process of its own; rejects when that process fails (pg-boss then retries). */
function runExportProcess(exportId: string): Promise<void> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', path.join(import.meta.dirname, 'export-run.ts'), exportId], { env: exportEnv(process.env), stdio: ['pipe', 'inherit', 'inherit'] });
    running.add(child);
    child.once('error', reject);
    child.once('exit', (code, signal) => {
      running.delete(child);
      if (code === 0) resolve();
      else reject(new Error(`the export process of ${exportId} ended with ${signal ?? `exit status ${code}`}`));
    });
  });
}

async function handle(jobs: PgBoss.Job<ExportJob>[]): Promise<void> {
  for (const job of jobs) await runExportProcess(job.data.exportId);
}

/** How often the worker looks for exports a stopped worker left running (jobs/worker.ts). */
export const RESUME_EXPORTS_EVERY_MS = Math.min(60_000, Math.max(1000, config().exportStallMs / 2));

/** Exports left running by a killed worker are picked up again by whichever worker looks next. */
export async function resumeExports(): Promise<void> {
  const n = await resumeStalledExports();
  if (n) console.log(`[export] resumed ${n} export(s) left by a stopped worker`);
}

export const exportHandler: JobHandler<'export'> = {
  queue: EXPORT_QUEUE.name,
  handle,
  concurrency: () => 1,
};
