/**
 * The mail queue: sends one queued e-mail (src/lib/server/mail-queue.ts). A send that fails (the
 * mail server down or refusing) throws, and the queue tries it again later.
 */
import type PgBoss from 'pg-boss';
import { MAIL_QUEUE } from '../src/lib/server/mail-queue.ts';
import { sendMail, type Mail } from '../src/lib/server/mailer.ts';
import type { JobHandler } from './registry.ts';

export const mailHandler: JobHandler = {
  queue: MAIL_QUEUE.name,
  handle: async (jobs: PgBoss.Job<Mail>[]) => {
    for (const job of jobs) await sendMail(job.data);
  },
};
