import PgBoss from 'pg-boss';
import { config } from './config.ts';
import { QUEUES, type JobData, type QueueName } from './queues.ts';

/**
 * How often pg-boss looks for jobs whose lease ran out (their worker was killed) and hands them
 * on. One process does it per interval, however many run (pg-boss keeps the time in its table).
 */
const MAINTENANCE_SECONDS = 10;

let started: Promise<PgBoss> | undefined;

/** The process-wide pg-boss instance, started, with every queue of the contract (queues.ts) created. */
export function queue(): Promise<PgBoss> {
  started ??= (async () => {
    const boss = new PgBoss({ connectionString: config().databaseUrl, max: 4, application_name: 'drawerlight', maintenanceIntervalSeconds: MAINTENANCE_SECONDS });
    boss.on('error', (err) => console.error('[queue]', err));
    await boss.start();
    // the dead-letter queue first: pg-boss refuses a queue whose dead-letter queue does not exist yet
    const queues = Object.values(QUEUES).sort((a, b) => Number(Boolean(a.options.deadLetter)) - Number(Boolean(b.options.deadLetter)));
    for (const q of queues) {
      await boss.createQueue(q.name, { name: q.name, ...q.options }).catch(ignoreExists);
      // a queue made by an earlier version takes the policy declared now
      await boss.updateQueue(q.name, { name: q.name, ...q.options });
    }
    return boss;
  })();
  return started;
}

/** Sends a job of `name` with its typed data; returns the job's id (null when pg-boss refused a duplicate). */
export async function sendJob<N extends QueueName>(name: N, data: JobData[N], options: PgBoss.SendOptions = {}): Promise<string | null> {
  const boss = await queue();
  return boss.send(name, data as object, options);
}

function ignoreExists(err: unknown) {
  if (!/already exists/i.test(String((err as Error)?.message))) throw err;
}

/** Stops pg-boss gracefully (waits for active jobs up to `timeoutMs`). */
export async function stopQueue(timeoutMs = 20_000): Promise<void> {
  if (!started) return;
  const boss = await started;
  started = undefined;
  await boss.stop({ graceful: true, timeout: timeoutMs, wait: true });
}
