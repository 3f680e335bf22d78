/**
 * E-mails the jobs send (a batch finished), through a queue of their own: a mail server that is down
 * or refusing costs a delay, not the message. The send is tried again with backoff for a day and a
 * half or more (the mail queue's policy in queues.ts), and a message that still could not go is kept
 * in the dead-letter queue. Queued inside the caller's transaction when given one, so the message is queued
 * exactly when what it tells of is committed.
 */
import { QueryTypes, type Transaction } from 'sequelize';
import { db } from '../../../db/index.ts';
import type { Mail } from './mailer.ts';
import { sendJob } from './queue.ts';
import { MAIL_QUEUE } from './queues.ts';

export { MAIL_QUEUE };

/** Queues `mail` for sending (jobs/mail.ts); inside `transaction` when given. */
export async function queueMail(mail: Mail, transaction?: Transaction): Promise<void> {
  // pg-boss runs its insert through the caller's connection when given one (its documented `db` option)
  const inTransaction = transaction && {
    db: {
      // Sequelize refuses an undefined bind value; pg-boss leaves its unset options undefined (SQL NULL)
      executeSql: async (text: string, values: unknown[]) => ({ rows: await db().query(text, { bind: values.map((v) => (v === undefined ? null : v)), transaction, type: QueryTypes.SELECT }) }),
    },
  };
  const id = await sendJob(MAIL_QUEUE.name, { ...mail }, inTransaction || {});
  if (!id) throw new Error(`the e-mail "${mail.subject}" to ${mail.to} could not be queued`);
}
