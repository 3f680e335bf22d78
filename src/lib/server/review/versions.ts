/** New and restored correction versions of a print; each queues a render. */
import { Correction, db } from '../../../../db/index.ts';
import type { Correction as CorrectionParams } from '../../restoration/correction.ts';
import type { CorrectionInput } from '../../review/index.ts';
import type { ItemDetail } from '../../review/types.ts';
import { recordAudit } from '../audit.ts';
import { AppError, Conflict, NotFound } from '../errors.ts';
import { requestRender } from '../processing.ts';
import { loadItemFor } from '../item-access.ts';
import { assertReady, when } from './conflicts.ts';
import { itemDetail } from './detail.ts';
import { nextVersion, parseParams } from './history.ts';
import { nameOf } from './names.ts';

/** Queues a render of one correction version on the render queue (jobs/render.ts) at once: a person asked for it. */
export async function queueRender(itemId: string, version: number): Promise<void> {
  await requestRender(itemId, version);
}

async function addVersion(
  locals: App.Locals,
  itemId: string,
  params: CorrectionParams,
  origin: 'operator' | 'restored',
  basedOnVersion: number | undefined,
  extra: Record<string, unknown>,
): Promise<{ detail: ItemDetail; version: number }> {
  const userId = locals.user!.id;
  const { item, version } = await db().transaction(async (transaction) => {
    const it = await loadItemFor(locals, itemId, 'editor', { transaction });
    assertReady(it);
    if (basedOnVersion !== undefined && it.currentVersion !== basedOnVersion) {
      const latest = await Correction.findOne({ where: { itemId: it.id, version: it.currentVersion ?? 0 }, transaction });
      const who = await nameOf(latest?.createdBy, transaction);
      throw new AppError(
        409,
        'stale_correction',
        `${who?.name ?? 'Someone'} saved version ${it.currentVersion} of this correction on ${await when(latest?.createdAt ?? it.updatedAt, it.archiveId, transaction)}, after the version ${basedOnVersion} you started from. Nothing of yours was saved: look at theirs, then adjust again.`,
        { currentVersion: String(it.currentVersion) },
      );
    }
    const v = await nextVersion(it.id, transaction);
    await Correction.create({ itemId: it.id, version: v, params, origin, createdBy: userId }, { transaction });
    await it.update({ currentVersion: v, lockVersion: it.lockVersion + 1 }, { transaction });
    await recordAudit(
      { archiveId: it.archiveId, actorId: userId, action: origin === 'operator' ? 'correction.save' : 'correction.restore', subjectType: 'item', subjectId: it.id, details: { version: v, params, basedOnVersion: basedOnVersion ?? null, ...extra }, requestId: locals.requestId },
      transaction,
    );
    return { item: it, version: v };
  });
  await queueRender(item.id, version);
  return { detail: await itemDetail(item), version };
}

/** Saves the operator's correction as a new version and queues its render. */
export function saveCorrection(locals: App.Locals, itemId: string, input: CorrectionInput) {
  return addVersion(locals, itemId, input.params, 'operator', input.basedOnVersion, {});
}

/** Makes an earlier version current again, as a new version (history is never rewritten), and queues its render. */
export async function restoreVersion(locals: App.Locals, itemId: string, version: number) {
  const item = await loadItemFor(locals, itemId, 'editor');
  const old = await Correction.findOne({ where: { itemId: item.id, version } });
  if (!old) throw new NotFound(`Version ${version} of this print's correction`);
  const params = parseParams(old.params);
  if (!params) throw new Conflict(`Version ${version} was written in a format this version of Drawerlight cannot render.`, 'unreadable_version');
  return addVersion(locals, itemId, params, 'restored', undefined, { restoredFrom: version });
}
