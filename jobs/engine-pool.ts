/**
 * A few engine threads for the worker (piscina): `analyseForReview` and `renderCorrected` of the
 * engine, each call on a thread of its own (at most one scan per thread), the results handed back.
 * On the worker's main thread the per-pixel JavaScript of two scans ran one after the other and
 * held up the queue and database work; on threads both cores run it (tests/bench/ingest.ts).
 */
import Piscina from 'piscina';
import type { AnalyseAndRenderOptions, AnalyseAndRenderResult, RenderOptions, RenderResult, ReviewCopiesOptions, ReviewCopiesResult, ScanLimits } from '../src/lib/restoration/imaging.ts';
import { ScanRejected } from '../src/lib/restoration/errors.ts';
import type { ScanRejectedCode } from '../src/lib/restoration/errors.ts';
import type { Correction } from '../src/lib/restoration/correction.ts';
import { config } from '../src/lib/server/config.ts';

/** What crosses to an engine thread is copied (structured clone): no functions, so no decode slot. */
type ThreadAnalyseAndRenderOptions = Omit<AnalyseAndRenderOptions, 'decodeSlot'>;

export type EngineRequest =
  | { kind: 'analyseAndRender'; path: string; options: ThreadAnalyseAndRenderOptions }
  | { kind: 'analyseForReview'; path: string; options: ReviewCopiesOptions }
  | { kind: 'renderCorrected'; path: string; correction: Correction; options: RenderOptions; limits?: Partial<ScanLimits> }
  | { kind: 'fingerprint'; path: string; limits?: Partial<ScanLimits> };

type EngineResult = RenderResult | ReviewCopiesResult | { fingerprint: string | null };
/**
 * A refused scan comes back as an answer, not as a thrown error: structured cloning keeps an
 * error's message but not its code, which the jobs need.
 */
export type EngineReply = { ok: true; result: EngineResult } | { ok: false; rejected?: ScanRejectedCode; message: string };

/** Structured cloning hands Buffers over as plain Uint8Arrays: make them Buffers again, without copying. */
function asBuffer(b: Uint8Array | undefined): Buffer | undefined {
  return b === undefined ? undefined : Buffer.from(b.buffer, b.byteOffset, b.byteLength);
}

function revive<T extends EngineResult>(r: T): T {
  if (!('previews' in r) && !('buffer' in r)) return r;
  if ('buffer' in r) r.buffer = asBuffer(r.buffer)!;
  if (r.previews) {
    for (const set of [r.previews.original, r.previews.corrected]) {
      if (set.preview) set.preview = asBuffer(set.preview);
      if (set.thumbnail) set.thumbnail = asBuffer(set.thumbnail);
    }
  }
  const probe = (r as unknown as AnalyseAndRenderResult).probe;
  if (probe?.exif) probe.exif = asBuffer(probe.exif);
  return r;
}

const THREAD_URL = new URL('./engine-thread.mjs', import.meta.url);

/** At most `size` scans at a time, one per thread; further calls wait their turn in order. */
export class EnginePool {
  private readonly pool: Piscina<EngineRequest, EngineReply>;

  constructor(size: number) {
    this.pool = new Piscina({
      filename: THREAD_URL.href,
      // threads start with the first scan and stay: each one's start loads the engine's code anew
      minThreads: 0,
      maxThreads: size,
      idleTimeout: Infinity,
      concurrentTasksPerWorker: 1,
      // plain messages between tasks: a thread parked on Atomics.wait could not finish libvips' callbacks
      atomics: 'disabled',
    });
  }

  analyseAndRender(path: string, options: ThreadAnalyseAndRenderOptions): Promise<AnalyseAndRenderResult> {
    return this.submit({ kind: 'analyseAndRender', path, options }) as Promise<AnalyseAndRenderResult>;
  }

  /** The analysis, the proposal and the small copies, without a full-resolution render. */
  analyseForReview(path: string, options: ReviewCopiesOptions): Promise<ReviewCopiesResult> {
    return this.submit({ kind: 'analyseForReview', path, options }) as Promise<ReviewCopiesResult>;
  }

  renderCorrected(path: string, correction: Correction, options: RenderOptions, limits?: Partial<ScanLimits>): Promise<RenderResult> {
    return this.submit({ kind: 'renderCorrected', path, correction, options, limits }) as Promise<RenderResult>;
  }

  /** The picture fingerprint of a scan alone (for prints analysed before fingerprints were kept). */
  async fingerprint(path: string, limits?: Partial<ScanLimits>): Promise<string | null> {
    return ((await this.submit({ kind: 'fingerprint', path, limits })) as { fingerprint: string | null }).fingerprint;
  }

  /** Stops the threads; scans still waiting are refused. */
  close(): Promise<void> {
    return this.pool.destroy();
  }

  private async submit(job: EngineRequest): Promise<EngineResult> {
    // a thread that died takes only its own scan with it (piscina rejects it and starts another)
    const reply = await this.pool.run(job);
    if (reply.ok) return revive(reply.result);
    throw reply.rejected ? new ScanRejected(reply.rejected, reply.message) : new Error(reply.message);
  }
}

let shared: EnginePool | undefined;
/** The worker's engine threads, shared by its queues: as many as WORKER_CONCURRENCY. */
export function enginePool(): EnginePool {
  shared ??= new EnginePool(config().workerConcurrency);
  return shared;
}
