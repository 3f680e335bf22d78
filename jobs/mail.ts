/**
 * The mail queue: sends one queued e-mail (src/lib/server/mail-queue.ts). A send that fails (the
 * mail server down or refusing) throws, and the queue tries it again later.
 */
import { sendMail } from '../src/lib/server/mailer.ts';
import { MAIL_QUEUE } from '../src/lib/server/queues.ts';
import type { JobHandler } from './registry.ts';

export const mailHandler: JobHandler<'mail'> = {
  queue: MAIL_QUEUE.name,
  handle: async (jobs) => {
    for (const job of jobs) await sendMail(job.data);
  },
};
