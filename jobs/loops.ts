/**
 * The polling loops of this worker, by queue (jobs/worker.ts registers them), so a job that this
 * process sends itself can wake the loops of its queue instead of waiting for their next poll.
 */
import { queue } from '../src/lib/server/queue.ts';

const loops = new Map<string, string[]>();

export function registerLoop(queueName: string, workerId: string): void {
  loops.set(queueName, [...(loops.get(queueName) ?? []), workerId]);
}

/** Ends the polling pause of this process's loops of a queue: they fetch at once. */
export async function wakeLoops(queueName: string): Promise<void> {
  const ids = loops.get(queueName);
  if (!ids?.length) return;
  const boss = await queue();
  for (const id of ids) boss.notifyWorker(id);
}
