/**
 * Decisions on prints, with optimistic concurrency (items.lock_version): one print, a selection
 * of a batch, and the undo of such a bulk decision.
 */
import { randomUUID } from 'node:crypto';
import { Op, type Transaction } from 'sequelize';
import { AuditEvent, Correction, Item, db } from '../../../../db/index.ts';
import { STATE_WORDS, type BulkDecisionInput, type Decision, type DecisionInput } from '../../review/index.ts';
import type { ItemDetail } from '../../review/types.ts';
import { recordAudit } from '../audit.ts';
import { batchForCaller } from '../batches.ts';
import { Conflict, InvalidInput, NotFound } from '../errors.ts';
import { loadItemFor } from '../item-access.ts';
import { assertReady, staleConflict } from './conflicts.ts';
import { itemDetail } from './detail.ts';
import { nextVersion } from './history.ts';
import { queueRender } from './versions.ts';

/** Column values for a decision; negative details are kept only with a rescan. */
function decisionValues(input: { decision: Decision | 'undecided' } & Pick<DecisionInput, 'negativeAvailable' | 'negativeLocation' | 'rescanNote'>, userId: string) {
  const rescan = input.decision === 'rescan';
  const cleared = input.decision === 'undecided';
  return {
    decision: cleared ? null : (input.decision as Decision),
    decidedBy: cleared ? null : userId,
    decidedAt: cleared ? null : new Date(),
    negativeAvailable: rescan ? (input.negativeAvailable ?? 'unknown') : null,
    negativeLocation: rescan ? input.negativeLocation || null : null,
    rescanNote: rescan ? input.rescanNote || null : null,
  };
}

/** The audit entry of a decision on one print: what was decided, and what it replaced (for an undo). */
function auditDecision(locals: App.Locals, it: Item, details: Record<string, unknown>, transaction: Transaction): Promise<void> {
  return recordAudit({ archiveId: it.archiveId, actorId: locals.user!.id, action: 'item.decide', subjectType: 'item', subjectId: it.id, details, requestId: locals.requestId }, transaction);
}

/**
 * Records a decision on one print. The caller sends the lockVersion it loaded; a print changed
 * since (another operator's decision or correction) is a 409 naming who decided and when.
 * With accepted_adjusted the operator's correction may come along and is saved as a new version.
 */
export async function decide(locals: App.Locals, itemId: string, input: DecisionInput): Promise<{ detail: ItemDetail; queuedVersion: number | null }> {
  const userId = locals.user!.id;
  let queuedVersion: number | null = null;
  const item = await db().transaction(async (transaction) => {
    const it = await loadItemFor(locals, itemId, 'editor', { transaction });
    assertReady(it);
    if (it.lockVersion !== input.lockVersion) throw await staleConflict(it, transaction);
    let version = it.currentVersion;
    if (input.decision === 'accepted_adjusted') {
      if (input.correction) {
        version = await nextVersion(it.id, transaction);
        await Correction.create({ itemId: it.id, version, params: input.correction, origin: 'operator', createdBy: userId }, { transaction });
        queuedVersion = version;
        await recordAudit({ archiveId: it.archiveId, actorId: userId, action: 'correction.save', subjectType: 'item', subjectId: it.id, details: { version, params: input.correction, basedOnVersion: it.currentVersion }, requestId: locals.requestId }, transaction);
      } else {
        const cur = version ? await Correction.findOne({ where: { itemId: it.id, version }, transaction }) : null;
        if (!cur || (cur.origin !== 'operator' && cur.origin !== 'restored')) {
          throw new InvalidInput('Accepting with changes needs a change: adjust the print first, or choose plain accept.', { decision: 'No adjusted version of this print exists yet.' });
        }
      }
    }
    const values = decisionValues(input, userId);
    const previous = { decision: it.decision, decidedBy: it.decidedBy };
    await it.update({ ...values, currentVersion: version, lockVersion: it.lockVersion + 1 }, { transaction });
    await auditDecision(locals, it, { decision: input.decision, version, previous, negativeAvailable: values.negativeAvailable, negativeLocation: values.negativeLocation, rescanNote: values.rescanNote }, transaction);
    return it;
  });
  if (queuedVersion) await queueRender(item.id, queuedVersion);
  return { detail: await itemDetail(item), queuedVersion };
}

/** What a bulk decision did, print by print; `bulkId` names it for an undo. */
export interface BulkResult {
  bulkId: string;
  decided: { id: string; lockVersion: number; decision: Decision | null }[];
  conflicts: { id: string; code: string; message: string }[];
}

/** A print's decision as it was before a change, kept in the audit trail so the change can be undone. */
function decisionState(it: Item) {
  return {
    decision: it.decision ?? null,
    decidedBy: it.decidedBy ?? null,
    decidedAt: it.decidedAt ? it.decidedAt.toISOString() : null,
    negativeAvailable: it.negativeAvailable ?? null,
    negativeLocation: it.negativeLocation ?? null,
    rescanNote: it.rescanNote ?? null,
  };
}

/**
 * Decides a selection of one batch's prints in one transaction. A print that changed since it
 * was loaded, or is not ready, is left alone and reported; the others are decided.
 */
export async function bulkDecide(locals: App.Locals, batchId: string, input: BulkDecisionInput): Promise<BulkResult> {
  const batch = await batchForCaller(locals, batchId, 'editor');
  const userId = locals.user!.id;
  const bulkId = randomUUID();
  return db().transaction(async (transaction) => {
    const ids = input.items.map((i) => i.id);
    const rows = await Item.findAll({ where: { id: ids, batchId }, transaction, lock: transaction.LOCK.UPDATE });
    const byId = new Map(rows.map((r) => [r.id, r]));
    const result: BulkResult = { bulkId, decided: [], conflicts: [] };
    for (const want of input.items) {
      const it = byId.get(want.id);
      if (!it) {
        result.conflicts.push({ id: want.id, code: 'not_found', message: 'This print is not in this batch.' });
        continue;
      }
      if (it.state !== 'ready') {
        result.conflicts.push({ id: it.id, code: 'not_ready', message: `Not ready to review (${STATE_WORDS[it.state as keyof typeof STATE_WORDS] ?? it.state}).` });
        continue;
      }
      if (it.lockVersion !== want.lockVersion) {
        const e = await staleConflict(it, transaction);
        result.conflicts.push({ id: it.id, code: e.code, message: e.message });
        continue;
      }
      const values = decisionValues(input, userId);
      const previous = decisionState(it);
      await it.update({ ...values, lockVersion: it.lockVersion + 1 }, { transaction });
      await auditDecision(
        locals,
        it,
        { decision: values.decision, bulk: true, bulkId, lockVersionAfter: it.lockVersion, version: it.currentVersion, previous, negativeAvailable: values.negativeAvailable, negativeLocation: values.negativeLocation },
        transaction,
      );
      result.decided.push({ id: it.id, lockVersion: it.lockVersion, decision: values.decision });
    }
    return result;
  });
}

/**
 * Undoes a bulk decision: every print it decided goes back to the decision it had before (read
 * from the audit trail), unless someone decided or adjusted it since; those are left as they are
 * and reported. The undo is itself recorded, so the trail keeps both steps.
 */
export async function undoBulkDecision(locals: App.Locals, batchId: string, bulkId: string): Promise<BulkResult> {
  const batch = await batchForCaller(locals, batchId, 'editor');
  const userId = locals.user!.id;
  return db().transaction(async (transaction) => {
    const events = await AuditEvent.findAll({
      where: { archiveId: batch.archiveId, action: 'item.decide', subjectType: 'item', [Op.and]: [db().where(db().literal("details->>'bulkId'"), bulkId)] },
      transaction,
    });
    if (events.length === 0) throw new NotFound('That bulk decision');
    const undone = await AuditEvent.count({ where: { archiveId: batch.archiveId, action: 'item.decide.undo', [Op.and]: [db().where(db().literal("details->>'undoOf'"), bulkId)] }, transaction });
    if (undone > 0) throw new Conflict('That bulk decision has been undone already.', 'already_undone');
    const rows = await Item.findAll({ where: { id: events.map((e) => e.subjectId!), batchId }, transaction, lock: transaction.LOCK.UPDATE });
    const byId = new Map(rows.map((r) => [r.id, r]));
    const result: BulkResult = { bulkId, decided: [], conflicts: [] };
    for (const e of events) {
      const it = byId.get(e.subjectId!);
      const d = e.details as { lockVersionAfter?: number; previous?: ReturnType<typeof decisionState> };
      if (!it) {
        result.conflicts.push({ id: e.subjectId!, code: 'not_found', message: 'This print is no longer in this batch.' });
        continue;
      }
      if (it.lockVersion !== d.lockVersionAfter || !d.previous) {
        const c = await staleConflict(it, transaction);
        result.conflicts.push({ id: it.id, code: c.code, message: c.message });
        continue;
      }
      const p = d.previous;
      const before = decisionState(it);
      await it.update(
        {
          decision: p.decision as Decision | null,
          decidedBy: p.decidedBy,
          decidedAt: p.decidedAt ? new Date(p.decidedAt) : null,
          negativeAvailable: (p.negativeAvailable as Item['negativeAvailable']) ?? null,
          negativeLocation: p.negativeLocation ?? null,
          rescanNote: p.rescanNote ?? null,
          lockVersion: it.lockVersion + 1,
        },
        { transaction },
      );
      await recordAudit(
        { archiveId: it.archiveId, actorId: userId, action: 'item.decide.undo', subjectType: 'item', subjectId: it.id, details: { undoOf: bulkId, decision: p.decision, previous: before }, requestId: locals.requestId },
        transaction,
      );
      result.decided.push({ id: it.id, lockVersion: it.lockVersion, decision: (p.decision as Decision | null) ?? null });
    }
    return result;
  });
}
