/**
 * The batch-settled queue: runs when none of a batch's items waits for or is in analysis.
 * 1. Batch pooling (the engine's poolAnalyses): each print's estimate is combined with its siblings'
 *    from the same box or drawer, as far as its own is unsure; where that changes the proposal, a 'pooled'
 *    correction version is added (jobs/render.ts renders it, as it does every version without a render).
 * 2. Whoever created the batch gets one e-mail with the counts and a link (finished_notified_at), through
 *    the mail queue, so a mail server that is down delays it instead of losing it.
 * Both wait until the batch has been quiet for BATCH_QUIET_SECONDS (the job puts itself off until then):
 * no scan added, no upload request started or ended, no worker started. A worker that starts queues
 * again the analyses a stopped worker left half done (jobs/presence.ts), so the counts are whole.
 * The batch row is locked throughout, so however many of these jobs arrive, the work is done once.
 */
import type PgBoss from 'pg-boss';
import { Op, QueryTypes } from 'sequelize';
import { Batch, Correction, Item, User, db } from '../db/index.ts';
import { poolAnalyses, type Analysis } from '../src/lib/restoration/analysis.ts';
import { sameCorrection } from '../src/lib/restoration/correction.ts';
import { stateCounts } from '../src/lib/server/batches.ts';
import { config } from '../src/lib/server/config.ts';
import { queueMail } from '../src/lib/server/mail-queue.ts';
import { linkMail } from '../src/lib/server/mailer.ts';
import { BATCH_QUIET_SECONDS, BATCH_SETTLED_QUEUE, enqueueBatchSettled, type BatchSettledJob } from '../src/lib/server/processing.ts';
import { PRESENCE_PREFIX } from './presence.ts';
import type { JobHandler } from './registry.ts';

/** The print's own measurement: the analysis as stored, without an earlier pooling note. */
function ownAnalysis(stored: Record<string, unknown>): Analysis {
  const { pooled: _pooled, pooledResult: _result, ...own } = stored as Record<string, unknown>;
  return own as unknown as Analysis;
}

async function settle(job: PgBoss.Job<BatchSettledJob>): Promise<void> {
  let pooledCount = 0;
  let putOff = 0;
  await db().transaction(async (transaction) => {
    const batch = await Batch.findByPk(job.data.batchId, { transaction, lock: transaction.LOCK.UPDATE });
    if (!batch) return;
    const counts = (await stateCounts([batch.id])).get(batch.id)!;
    if (counts.total === 0 || counts.queued > 0 || counts.analysing > 0) return;
    // Quiet since the latest of: the newest scan, the last upload request (one in flight or being
    // retried adds no item yet), and the start of the newest worker (after a stop, uploads cut off
    // with it get the time to come back). On PostgreSQL's clock, which every process shares.
    const [{ quiet_for: quietFor }] = await db().query<{ quiet_for: number | null }>(
      `SELECT extract(epoch FROM now() - greatest(
                (SELECT max(created_at) FROM items WHERE batch_id = :batchId),
                (SELECT last_upload_at FROM batches WHERE id = :batchId),
                (SELECT max(backend_start) FROM pg_stat_activity WHERE application_name LIKE :presence)))::float8 AS quiet_for`,
      { replacements: { batchId: batch.id, presence: `${PRESENCE_PREFIX}%` }, type: QueryTypes.SELECT, transaction },
    );
    if (quietFor !== null && quietFor < BATCH_QUIET_SECONDS) {
      putOff = BATCH_QUIET_SECONDS - quietFor;
      return;
    }

    const items = (await Item.findAll({ where: { batchId: batch.id, state: 'ready', analysis: { [Op.ne]: null } }, order: [['seq', 'ASC']], transaction }));
    const own = items.map((i) => ownAnalysis(i.analysis!));
    const pooled = poolAnalyses(own);
    for (let n = 0; n < items.length; n++) {
      const item = items[n];
      const result = pooled[n];
      if (!result.pooled || item.decision) continue;
      const latest = await Correction.findOne({ where: { itemId: item.id }, order: [['version', 'DESC']], transaction });
      if (latest && latest.origin !== 'proposed' && latest.origin !== 'pooled') continue;
      const params = { ...result.proposed };
      // compared as values: the stored JSONB comes back with its keys reordered, and a change under
      // a thousandth of a gain or white point renders the same
      if (latest && sameCorrection(latest.params, params)) continue;
      const version = (latest?.version ?? 0) + 1;
      await Correction.create({ itemId: item.id, version, params: params as unknown as Record<string, unknown>, origin: 'pooled', createdBy: null }, { transaction });
      await Item.update(
        {
          currentVersion: version,
          fadeGrade: result.fadeGrade,
          analysis: { ...(own[n] as unknown as Record<string, unknown>), pooled: result.pooled, pooledResult: { fadeGrade: result.fadeGrade, yellowingGrade: result.yellowingGrade, confidence: result.confidence, expectedDeltaE00: result.expectedDeltaE00, dyes: result.dyes, proposed: result.proposed } },
        },
        { where: { id: item.id }, transaction },
      );
      pooledCount++;
    }

    if (!batch.finishedNotifiedAt) {
      const creator = batch.createdBy ? await User.findByPk(batch.createdBy, { transaction }) : null;
      if (creator) {
        const url = `${config().appUrl}/batches/${batch.id}`;
        const parts = [`${counts.ready} ready for review`];
        if (counts.failed) parts.push(`${counts.failed} failed (each with its reason and a "Try again" button)`);
        const mail = linkMail(
          creator.email,
          `Batch "${batch.name}" is ready for review`,
          `All ${counts.total} scans of the batch "${batch.name}" have been processed: ${parts.join(', ')}.`,
          'Open the batch',
          url,
          pooledCount ? `${pooledCount} prints had their proposal refined with what the other prints of this batch show (prints of one box usually aged alike).` : '',
        );
        // Queued in this transaction: it goes out exactly when the mark is committed, and a mail
        // server that is down delays it (the mail queue retries) instead of losing it.
        await queueMail(mail, transaction);
      }
      await batch.update({ finishedNotifiedAt: new Date() }, { transaction });
    }
  });
  if (putOff > 0) await enqueueBatchSettled(job.data.batchId, putOff);
}

export const batchSettledHandler: JobHandler<'batch-settled'> = {
  queue: BATCH_SETTLED_QUEUE.name,
  handle: async (jobs) => {
    for (const job of jobs) await settle(job);
  },
};
