/**
 * One engine thread of the worker (jobs/engine-pool.ts): decodes, measures and renders one scan
 * at a time off the worker's main thread, so the per-pixel JavaScript of two scans (tables,
 * analysis) and their garbage collection run side by side on both cores, and the main thread
 * is left to the queue, the files and the database.
 */
import { parentPort } from 'node:worker_threads';
import sharp from 'sharp';
import { analyseAndRender, analyseForReview, renderCorrected, ScanRejected } from '../src/lib/restoration/imaging.ts';
import type { EngineReply, EngineRequest } from './engine-pool.ts';

sharp.cache(false);

parentPort!.on('message', async (req: EngineRequest) => {
  let reply: EngineReply;
  try {
    const result =
      req.kind === 'analyseAndRender'
        ? await analyseAndRender(req.path, req.options)
        : req.kind === 'analyseForReview'
          ? await analyseForReview(req.path, req.options)
          : await renderCorrected(req.path, req.correction, req.options, req.limits);
    reply = { id: req.id, ok: true, result };
  } catch (err) {
    const e = err as Error;
    reply = { id: req.id, ok: false, rejected: err instanceof ScanRejected ? err.code : undefined, message: String(e?.message ?? err) };
  }
  parentPort!.postMessage(reply);
});
