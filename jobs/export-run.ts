/**
 * One export in a process of its own, started by the export queue's handler (jobs/export.ts) and
 * ended when the export is done: the memory a large export touches (2-4 GB of JPEGs and zip going
 * through the renders, archiver and the final check) goes back to the system with the process, instead
 * of staying with the long-running worker. Exit status 0 when the export is ready (or was already).
 *   node --import tsx jobs/export-run.ts <export id>
 */
import { closeDb } from '../db/index.ts';
import { imagingForLongRuns } from '../src/lib/restoration/imaging.ts';
import { openDatabase } from '../src/lib/server/database.ts';
import { runExport } from '../src/lib/server/export/job.ts';

imagingForLongRuns();
openDatabase();
const exportId = process.argv[2];
// The worker that started this process holds the other end of its stdin: when the worker dies,
// even by kill -9, stdin ends and so does this export, which the next worker then picks up again
// (resumeStalledExports) instead of racing a half-finished run for the same zip.
process.stdin.on('end', () => {
  console.error(`[export] ${exportId}: the worker that started this export has stopped; stopping too`);
  process.exit(1);
});
process.stdin.resume();
try {
  if (!exportId) throw new Error('usage: export-run.ts <export id>');
  await runExport(exportId);
} catch (err) {
  console.error(`[export] ${exportId} failed:`, err);
  process.exitCode = 1;
} finally {
  await closeDb();
  // stdin, watched above, would keep the process waiting
  process.exit();
}
