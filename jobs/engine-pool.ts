/**
 * A few engine threads for the worker: `analyseForReview` and `renderCorrected` of the engine,
 * each call on a thread of its own (at most one scan per thread), the results handed back.
 * On the worker's main thread the per-pixel JavaScript of two scans ran one after the other and
 * held up the queue and database work; on threads both cores run it (tests/bench/ingest.ts).
 */
import { Worker } from 'node:worker_threads';
import type { AnalyseAndRenderOptions, AnalyseAndRenderResult, RenderOptions, RenderResult, ReviewCopiesOptions, ReviewCopiesResult, ScanLimits } from '../src/lib/restoration/imaging.ts';
import { ScanRejected } from '../src/lib/restoration/errors.ts';
import type { ScanRejectedCode } from '../src/lib/restoration/errors.ts';
import type { Correction } from '../src/lib/restoration/correction.ts';
import { config } from '../src/lib/server/config.ts';

/** What crosses to an engine thread is copied (structured clone): no functions, so no decode slot. */
type ThreadAnalyseAndRenderOptions = Omit<AnalyseAndRenderOptions, 'decodeSlot'>;

export type EngineRequest =
  | { id: number; kind: 'analyseAndRender'; path: string; options: ThreadAnalyseAndRenderOptions }
  | { id: number; kind: 'analyseForReview'; path: string; options: ReviewCopiesOptions }
  | { id: number; kind: 'renderCorrected'; path: string; correction: Correction; options: RenderOptions; limits?: Partial<ScanLimits> };
type Job = EngineRequest extends infer R ? (R extends { id: number } ? Omit<R, 'id'> : never) : never;

type EngineResult = RenderResult | ReviewCopiesResult;
export type EngineReply = { id: number; ok: true; result: EngineResult } | { id: number; ok: false; rejected?: ScanRejectedCode; message: string };

/** Structured cloning hands Buffers over as plain Uint8Arrays: make them Buffers again, without copying. */
function asBuffer(b: Uint8Array | undefined): Buffer | undefined {
  return b === undefined ? undefined : Buffer.from(b.buffer, b.byteOffset, b.byteLength);
}

function revive<T extends EngineResult>(r: T): T {
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

interface Lane {
  thread: Worker;
  busy?: { id: number; resolve: (r: EngineResult) => void; reject: (e: Error) => void };
}

const THREAD_URL = new URL('./engine-thread.mjs', import.meta.url);

/** At most `size` scans at a time, one per thread; further calls wait their turn in order. */
export class EnginePool {
  private lanes: Lane[] = [];
  private waiting: { job: Job; resolve: (r: EngineResult) => void; reject: (e: Error) => void }[] = [];
  private nextId = 1;

  constructor(private readonly size: number) {}

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

  private submit(job: Job): Promise<EngineResult> {
    return new Promise((resolve, reject) => {
      this.waiting.push({ job, resolve, reject });
      this.pump();
    });
  }

  private spawn(): Lane {
    const lane: Lane = { thread: new Worker(THREAD_URL) };
    lane.thread.unref();
    lane.thread.on('message', (reply: EngineReply) => {
      const busy = lane.busy;
      lane.busy = undefined;
      if (busy) {
        if (reply.ok) busy.resolve(revive(reply.result));
        else busy.reject(reply.rejected ? new ScanRejected(reply.rejected, reply.message) : new Error(reply.message));
      }
      this.pump();
    });
    const lost = (err: Error) => {
      // a thread that died takes only its own scan with it; a new thread replaces it
      this.lanes = this.lanes.filter((l) => l !== lane);
      lane.busy?.reject(err);
      lane.busy = undefined;
      this.pump();
    };
    lane.thread.on('error', lost);
    lane.thread.on('exit', (code) => lost(new Error(`engine thread stopped (exit code ${code})`)));
    this.lanes.push(lane);
    return lane;
  }

  private pump(): void {
    while (this.waiting.length > 0) {
      let lane = this.lanes.find((l) => !l.busy);
      if (!lane && this.lanes.length < this.size) lane = this.spawn();
      if (!lane) return;
      const { job, resolve, reject } = this.waiting.shift()!;
      const id = this.nextId++;
      lane.busy = { id, resolve, reject };
      lane.thread.postMessage({ ...job, id });
    }
  }
}

let shared: EnginePool | undefined;
/** The worker's engine threads, shared by its queues: as many as WORKER_CONCURRENCY. */
export function enginePool(): EnginePool {
  shared ??= new EnginePool(config().workerConcurrency);
  return shared;
}
