/**
 * The job worker: one process that runs every queue's handler. `npm start` runs one;
 * `npm run worker` runs another alone (several may run at once; pg-boss hands each job to one).
 */
import sharp from 'sharp';
import { closeDb } from '../db/index.ts';
import { config } from '../src/lib/server/config.ts';
import { queue, stopQueue } from '../src/lib/server/queue.ts';
import { HANDLERS } from './registry.ts';

sharp.cache(false);
const c = config();
const boss = await queue();
for (const h of HANDLERS) {
  await boss.work(h.queue, { batchSize: 1, pollingIntervalSeconds: 0.5, ...(h.workOptions ?? {}) }, h.handle);
  for (let i = 1; i < (h.concurrency?.(c) ?? 1); i++) {
    await boss.work(h.queue, { batchSize: 1, pollingIntervalSeconds: 0.5, ...(h.workOptions ?? {}) }, h.handle);
  }
}
console.log(`worker ${process.pid}: working on ${HANDLERS.map((h) => h.queue).join(', ') || 'no queues yet'}`);

let stopping = false;
async function shutdown() {
  if (stopping) return;
  stopping = true;
  await stopQueue();
  await closeDb();
  process.exit(0);
}
process.on('SIGTERM', shutdown);
process.on('SIGINT', shutdown);
