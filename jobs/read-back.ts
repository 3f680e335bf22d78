/**
 * The read-back queue: the text on a print's back read with OCR (src/lib/server/back-text.ts), kept
 * on the back and suggested to its print, with the date found in it. Sent when the analysis keeps a
 * scan as a back. It never holds up the review: while prints of its archive wait for their analysis,
 * a reading is put off (sent again a little later, at most MAX_WAITS times), and one loop reads one
 * back at a time. Idempotent: a back read already is left alone.
 */
import { READ_BACK_QUEUE, type ReadBackJob } from '../src/lib/server/queues.ts';
import { analysesWaiting, backToRead, recordBackText } from '../src/lib/server/backs.ts';
import { readBackText } from '../src/lib/server/back-text.ts';
import { sendJob } from '../src/lib/server/queue.ts';
import { storage } from '../src/lib/server/storage.ts';
import type { JobHandler } from './registry.ts';

/** Seconds a reading is put off while prints of its archive wait for analysis, and how often (five minutes in all). */
const WAIT_SECONDS = 10;
const MAX_WAITS = 30;

/** Sends the reading of a back (from the analysis, once the scan is kept as a back). */
export function enqueueReadBack(backId: string): Promise<string | null> {
  return sendJob(READ_BACK_QUEUE.name, { backId });
}

async function readBack(data: ReadBackJob): Promise<void> {
  const waiting = await backToRead(data.backId);
  if (!waiting) return;
  const waited = data.waited ?? 0;
  if (waited < MAX_WAITS && (await analysesWaiting(waiting.archiveId))) {
    await sendJob(READ_BACK_QUEUE.name, { backId: data.backId, waited: waited + 1 }, { startAfter: WAIT_SECONDS });
    return;
  }
  const started = performance.now();
  const { text, confidence } = await readBackText(await storage().readBuffer(waiting.storageKey));
  await recordBackText(data.backId, text);
  console.log(`read-back ${data.backId}: ${text.length} characters (confidence ${Math.round(confidence)}) in ${Math.round(performance.now() - started)} ms`);
}

export const readBackHandler: JobHandler<'read-back'> = {
  queue: READ_BACK_QUEUE.name,
  concurrency: () => 1,
  workOptions: { batchSize: 1 },
  handle: async (jobs) => {
    for (const job of jobs) await readBack(job.data);
  },
};
