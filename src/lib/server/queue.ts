import PgBoss from 'pg-boss';
import { config } from './config.ts';

/**
 * Queue behaviour declared once, as data: names, retries with backoff, and where a job goes
 * when it has failed for good. The worker and the web server both read this list.
 */
export interface QueueSpec {
  name: string;
  options: Omit<PgBoss.Queue, 'name'>;
}

export const DEAD_LETTER_QUEUE = 'dead-letter';

/** Every queue; handlers live in jobs/<name>.ts and are registered by jobs/worker.ts. */
export const QUEUES: QueueSpec[] = [
  { name: DEAD_LETTER_QUEUE, options: { retentionDays: 30 } },
];

/** Adds a queue spec (used by feature modules at import time, before the queue starts). */
export function declareQueue(spec: QueueSpec): QueueSpec {
  if (!QUEUES.some((q) => q.name === spec.name)) QUEUES.push(spec);
  return spec;
}

let started: Promise<PgBoss> | undefined;

/** The process-wide pg-boss instance, started, with every declared queue created. */
export function queue(): Promise<PgBoss> {
  started ??= (async () => {
    const boss = new PgBoss({ connectionString: config().databaseUrl, max: 4, application_name: 'drawerlight' });
    boss.on('error', (err) => console.error('[queue]', err));
    await boss.start();
    for (const q of QUEUES) await boss.createQueue(q.name, { name: q.name, ...q.options }).catch(ignoreExists);
    return boss;
  })();
  return started;
}

const created = new Set<string>();

/**
 * The started queue, with `spec`'s queue made sure of once per process: pg-boss 10 refuses to send
 * to a queue it has not created, and a process may have started the queue before the module that
 * declares `spec` was imported.
 */
export async function queueFor(spec: QueueSpec): Promise<PgBoss> {
  const boss = await queue();
  if (!created.has(spec.name)) {
    await boss.createQueue(spec.name, { name: spec.name, ...spec.options }).catch(ignoreExists);
    created.add(spec.name);
  }
  return boss;
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
