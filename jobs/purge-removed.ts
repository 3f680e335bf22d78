/**
 * The purge of removed prints and batches: once an hour, whatever was removed more than 30 days
 * ago is deleted for good, rows and files (src/lib/server/removal.ts). pg-boss's schedule sends
 * one job per hour however many workers run; a purge is idempotent, so a retried one is harmless.
 */
import { queue } from '../src/lib/server/queue.ts';
import { PURGE_REMOVED_QUEUE } from '../src/lib/server/queues.ts';
import { purgeRemoved } from '../src/lib/server/removal.ts';
import type { JobHandler } from './registry.ts';

export { PURGE_REMOVED_QUEUE };

/** Asks pg-boss to send a purge job at minute 17 of every hour (one schedule per queue, kept in the database). */
export async function schedulePurge(): Promise<void> {
  const boss = await queue();
  await boss.schedule(PURGE_REMOVED_QUEUE.name, '17 * * * *');
}

export const purgeRemovedHandler: JobHandler<'purge-removed'> = {
  queue: PURGE_REMOVED_QUEUE.name,
  handle: async (jobs) => {
    for (const _ of jobs) {
      const done = await purgeRemoved();
      if (done.prints || done.batches) console.log(`[purge-removed] deleted ${done.prints} print(s), ${done.batches} batch(es), ${done.originals} original scan(s) removed over 30 days ago`);
    }
  },
  concurrency: () => 1,
};
