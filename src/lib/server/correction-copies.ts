/**
 * One print's saved correction used on chosen prints of its batch: each chosen print gets it as a
 * new version of its own (history is never rewritten), with a render queued, all in one step.
 */
import { Op } from 'sequelize';
import { Correction, Item, db } from '../../../db/index.ts';
import { correctionSchema, type Correction as CorrectionParams } from '../restoration/correction.ts';
import { copiedCorrection, type CorrectionCopyInput } from '../review/correction-copies.ts';
import { recordAudit } from './audit.ts';
import { AppError, Conflict, InvalidInput } from './errors.ts';
import { requestRender } from './processing.ts';
import { loadItemFor } from './item-access.ts';

export interface CopyResult {
  from: { id: string; version: number };
  copied: { id: string; seq: number; version: number }[];
}

function parsed(raw: unknown): CorrectionParams | null {
  const r = correctionSchema.safeParse(raw);
  return r.success ? r.data : null;
}

/**
 * Saves the source print's current correction on every print of `input.to`. All or nothing: a
 * print outside the source's batch, the source itself, a print not ready, or a source changed
 * since the caller looked, refuses the whole request and saves nothing.
 */
export async function copyCorrection(locals: App.Locals, sourceId: string, input: CorrectionCopyInput): Promise<CopyResult> {
  const userId = locals.user!.id;
  const result = await db().transaction(async (transaction) => {
    const source = await loadItemFor(locals, sourceId, 'editor', { transaction });
    if (!source.currentVersion) throw new Conflict('This print has no saved correction to use on others yet.', 'no_correction');
    if (input.fromVersion !== undefined && input.fromVersion !== source.currentVersion) {
      throw new AppError(409, 'stale_correction', `Version ${source.currentVersion} of this print's correction was saved after the version ${input.fromVersion} you are looking at. Nothing was copied: look at it again first.`, {
        currentVersion: String(source.currentVersion),
      });
    }
    const row = await Correction.findOne({ where: { itemId: source.id, version: source.currentVersion }, transaction });
    const params = row ? parsed(row.params) : null;
    if (!params) throw new Conflict("This print's correction was written in a format this version of Drawerlight cannot use.", 'unreadable_version');
    if (input.to.includes(source.id)) throw new InvalidInput('Choose other prints than this one.', { to: 'Lists the print the correction comes from.' });

    // locked in id order, so two copies over overlapping prints cannot wait on each other
    const targets = await Item.findAll({ where: { id: { [Op.in]: input.to }, batchId: source.batchId }, order: [['id', 'ASC']], transaction, lock: transaction.LOCK.UPDATE });
    if (targets.length !== input.to.length) {
      const found = new Set(targets.map((t) => t.id));
      const missing = input.to.filter((id) => !found.has(id));
      throw new InvalidInput(`${missing.length === 1 ? 'One print is' : `${missing.length} prints are`} not in this print's batch: a correction is used only within its batch.`, { to: missing.join(',') });
    }
    const notReady = targets.filter((t) => t.state !== 'ready');
    if (notReady.length > 0) {
      throw new Conflict(`${notReady.map((t) => `Print ${t.seq}`).join(', ')} ${notReady.length === 1 ? 'is' : 'are'} not ready to review yet. Nothing was copied.`, 'not_ready');
    }

    const copied: CopyResult['copied'] = [];
    for (const t of targets) {
      const own = t.currentVersion ? await Correction.findOne({ where: { itemId: t.id, version: t.currentVersion }, transaction }) : null;
      const next = copiedCorrection(params, own ? parsed(own.params) : null, input.withGeometry);
      const max = (await Correction.max('version', { where: { itemId: t.id }, transaction })) as number | null;
      const version = (max ?? 0) + 1;
      await Correction.create({ itemId: t.id, version, params: next, origin: 'operator', createdBy: userId }, { transaction });
      await t.update({ currentVersion: version, lockVersion: t.lockVersion + 1 }, { transaction });
      await recordAudit(
        {
          archiveId: t.archiveId,
          actorId: userId,
          action: 'correction.copy',
          subjectType: 'item',
          subjectId: t.id,
          details: { version, params: next, copiedFrom: { itemId: source.id, seq: source.seq, version: source.currentVersion }, withGeometry: input.withGeometry },
          requestId: locals.requestId,
        },
        transaction,
      );
      copied.push({ id: t.id, seq: t.seq, version });
    }
    copied.sort((a, b) => a.seq - b.seq);
    return { from: { id: source.id, version: source.currentVersion }, copied };
  });
  for (const c of result.copied) await requestRender(c.id, c.version);
  return result;
}
