/**
 * The queue contract, declared once: every queue's name, the data its jobs carry, and its policy
 * (retries with backoff, lease, how long finished jobs are kept, where a job goes when it has
 * failed for good). The web server, the command lines and the worker all start pg-boss with this
 * list (src/lib/server/queue.ts creates every queue at start), and jobs/registry.ts must give
 * each queue but the dead-letter one a handler. A new queue starts here.
 */
import type PgBoss from 'pg-boss';
import type { Mail } from './mailer.ts';

/** Analyse one item: decode once, measure, propose, and make the small copies the review shows. */
export interface AnalyseJob {
  itemId: string;
}
/** Render one correction version of an item at full resolution. */
export interface RenderJob {
  itemId: string;
  version: number;
}
/** A batch's analyses are all in: pool the uncertain prints, then tell whoever made the batch. */
export interface BatchSettledJob {
  batchId: string;
}
/** Write one export's BagIt zip. */
export interface ExportJob {
  exportId: string;
}
/**
 * Read the text on one print's back. `waited` counts how often it was put off because prints
 * were waiting for their analysis (the review comes first).
 */
export interface ReadBackJob {
  backId: string;
  waited?: number;
}
/** The hourly purge of what was removed over 30 days ago carries nothing. */
export type PurgeRemovedJob = Record<string, never>;

/** The data a job of each queue carries. */
export interface JobData {
  analyse: AnalyseJob;
  render: RenderJob;
  'batch-settled': BatchSettledJob;
  export: ExportJob;
  mail: Mail;
  'purge-removed': PurgeRemovedJob;
  'read-back': ReadBackJob;
  /** Whatever a job that failed for good carried. */
  'dead-letter': unknown;
}

export type QueueName = keyof JobData;
/** The queues a worker runs handlers for: every one but the dead-letter queue, which is only kept. */
export type WorkedQueue = Exclude<QueueName, 'dead-letter'>;

export interface QueueSpec<N extends QueueName = QueueName> {
  name: N;
  options: Omit<PgBoss.Queue, 'name'>;
}

export const DEAD_LETTER_QUEUE = 'dead-letter' satisfies QueueName;

/** Every queue and its policy. */
export const QUEUES: { [N in QueueName]: QueueSpec<N> } = {
  // Leases are set per job from the scan's size (processing.ts: leaseSeconds); this is the ceiling's default.
  analyse: { name: 'analyse', options: { retryLimit: 4, retryDelay: 5, retryBackoff: true, expireInSeconds: 900, retentionDays: 7, deadLetter: DEAD_LETTER_QUEUE } },
  render: { name: 'render', options: { retryLimit: 4, retryDelay: 5, retryBackoff: true, expireInSeconds: 900, retentionDays: 7, deadLetter: DEAD_LETTER_QUEUE } },
  'batch-settled': { name: 'batch-settled', options: { retryLimit: 6, retryDelay: 10, retryBackoff: true, expireInSeconds: 600, retentionDays: 7, deadLetter: DEAD_LETTER_QUEUE } },
  // an export is long: an hour's lease for a large archive, retried a little
  export: { name: 'export', options: { retryLimit: 2, retryDelay: 30, retryBackoff: true, expireInSeconds: 3600, retentionDays: 7, deadLetter: DEAD_LETTER_QUEUE } },
  // A mail server that is down costs a delay, not the message: 12 retries from 30 s, doubling (a day
  // and a half or more); the lease covers a slow SMTP server's timeouts, so a send is not handed out twice.
  mail: { name: 'mail', options: { retryLimit: 12, retryDelay: 30, retryBackoff: true, expireInSeconds: 600, retentionDays: 14, deadLetter: DEAD_LETTER_QUEUE } },
  'purge-removed': { name: 'purge-removed', options: { retryLimit: 3, retryDelay: 60, retryBackoff: true, deadLetter: DEAD_LETTER_QUEUE } },
  // a few seconds of OCR a back; a back that cannot be read is left unread, with nothing lost
  'read-back': { name: 'read-back', options: { retryLimit: 3, retryDelay: 30, retryBackoff: true, expireInSeconds: 600, retentionDays: 7, deadLetter: DEAD_LETTER_QUEUE } },
  [DEAD_LETTER_QUEUE]: { name: DEAD_LETTER_QUEUE, options: { retentionDays: 30 } },
};

export const ANALYSE_QUEUE = QUEUES.analyse;
export const RENDER_QUEUE = QUEUES.render;
export const BATCH_SETTLED_QUEUE = QUEUES['batch-settled'];
export const EXPORT_QUEUE = QUEUES.export;
export const MAIL_QUEUE = QUEUES.mail;
export const PURGE_REMOVED_QUEUE = QUEUES['purge-removed'];
export const READ_BACK_QUEUE = QUEUES['read-back'];
