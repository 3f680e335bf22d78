/**
 * One engine thread of the worker (jobs/engine-pool.ts, a piscina pool): decodes, measures and
 * renders one scan at a time off the worker's main thread, so the per-pixel JavaScript of two
 * scans (tables, analysis) and their garbage collection run side by side on both cores, and the
 * main thread is left to the queue, the files and the database.
 */
import { analyseAndRender, analyseForReview, fingerprintScan, imagingForLongRuns, renderCorrected, ScanRejected } from '../src/lib/restoration/imaging.ts';
import type { EngineReply, EngineRequest } from './engine-pool.ts';

imagingForLongRuns();

/** Runs one scan's engine call; a refusal is an answer (see EngineReply). */
export default async function engineTask(req: EngineRequest): Promise<EngineReply> {
  try {
    const result =
      req.kind === 'analyseAndRender'
        ? await analyseAndRender(req.path, req.options)
        : req.kind === 'analyseForReview'
          ? await analyseForReview(req.path, req.options)
          : req.kind === 'fingerprint'
            ? { fingerprint: await fingerprintScan(req.path, req.limits) }
            : await renderCorrected(req.path, req.correction, req.options, req.limits);
    return { ok: true, result };
  } catch (err) {
    return { ok: false, rejected: err instanceof ScanRejected ? err.code : undefined, message: String((err as Error)?.message ?? err) };
  }
}
