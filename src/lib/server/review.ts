/**
 * The review workbench on the server: a print's detail and correction history, decisions with
 * optimistic concurrency (items.lock_version), bulk decisions, new and restored correction
 * versions (each queues a render), and full-resolution crops for the 1:1 view.
 */
import { randomUUID } from 'node:crypto';
import sharp from 'sharp';
import { Op, type Transaction } from 'sequelize';
import { Archive, AuditEvent, Batch, Correction, Item, Original, User, db } from '../../../db/index.ts';
import { correctionSchema, applyCorrection, applyGeometry, buildChannelLuts, geometryPlan, hasGeometry, type Correction as CorrectionParams } from '../restoration/correction.ts';
import { probeScan } from '../restoration/imaging.ts';
import type { Analysis } from '../restoration/analysis.ts';
import { DEFAULT_TIME_ZONE, formatWhen } from '../archive/when.ts';
import { requireArchiveRole } from './access.ts';
import { recordAudit } from './audit.ts';
import { config } from './config.ts';
import { AppError, Conflict, InvalidInput, NotFound } from './errors.ts';
import { requestRender } from './processing.ts';
import { storage } from './storage.ts';
import type { Role } from '../auth/roles.ts';
import {
  DECISION_WORDS,
  STATE_WORDS,
  type BulkDecisionInput,
  type CorrectionInput,
  type CropQuery,
  type Decision,
  type DecisionInput,
} from '../review/index.ts';
import type { CorrectionVersion, ItemDetail, ItemRow } from '../review/types.ts';

export type { CorrectionVersion, ItemDetail, ItemRow } from '../review/types.ts';

const userNames = new Map<string, string>();
async function nameOf(userId: string | null | undefined, transaction?: Transaction): Promise<{ id: string; name: string } | null> {
  if (!userId) return null;
  if (!userNames.has(userId)) {
    const u = await User.findByPk(userId, { attributes: ['id', 'name', 'email'], transaction });
    if (!u) return { id: userId, name: 'a former member' };
    userNames.set(userId, u.name ?? u.email);
  }
  return { id: userId, name: userNames.get(userId)! };
}

/** The print with `id` if the caller may act on it with `role`; another archive's prints are 404. */
export async function itemForRole(locals: App.Locals, id: string, role: Role, transaction?: Transaction): Promise<Item> {
  const item = await Item.findByPk(id, { transaction, lock: transaction ? transaction.LOCK.UPDATE : undefined });
  if (!item) throw new NotFound('That print');
  requireArchiveRole(locals, item.archiveId, role, 'That print');
  return item;
}

function parseParams(raw: unknown): CorrectionParams | null {
  const r = correctionSchema.safeParse(raw);
  return r.success ? r.data : null;
}

async function versionsOf(itemId: string, transaction?: Transaction): Promise<CorrectionVersion[]> {
  const rows = await Correction.findAll({ where: { itemId }, order: [['version', 'ASC']], transaction });
  const out: CorrectionVersion[] = [];
  for (const r of rows) {
    const params = parseParams(r.params);
    if (!params) continue;
    out.push({ version: r.version, origin: r.origin, params, createdBy: await nameOf(r.createdBy, transaction), createdAt: r.createdAt.toISOString() });
  }
  return out;
}

/** The detail of one print: analysis, current and proposed correction, history, decision, neighbours in its batch. */
export async function itemDetail(item: Item): Promise<ItemDetail> {
  const [batch, original, corrections, decidedBy, previous, next] = await Promise.all([
    Batch.findByPk(item.batchId, { attributes: ['name'] }),
    Original.findByPk(item.originalId, { attributes: ['width', 'height'] }),
    versionsOf(item.id),
    nameOf(item.decidedBy),
    Item.findOne({ where: { batchId: item.batchId, seq: { [Op.lt]: item.seq } }, order: [['seq', 'DESC']], attributes: ['id'] }),
    Item.findOne({ where: { batchId: item.batchId, seq: { [Op.gt]: item.seq } }, order: [['seq', 'ASC']], attributes: ['id'] }),
  ]);
  const analysis = (item.analysis as Analysis | null) ?? null;
  const current = corrections.find((c) => c.version === item.currentVersion)?.params ?? corrections.at(-1)?.params ?? null;
  // the newest of Drawerlight's own proposals: a batch-pooled one replaces the print's first
  const proposed = corrections.findLast((c) => c.origin === 'proposed' || c.origin === 'pooled')?.params ?? parseParams(analysis?.proposed) ?? null;
  return {
    id: item.id,
    archiveId: item.archiveId,
    batchId: item.batchId,
    batchName: batch?.name ?? '',
    seq: item.seq,
    originalName: item.originalName,
    state: item.state,
    failureReason: item.failureReason ?? null,
    fadeGrade: item.fadeGrade ?? analysis?.fadeGrade ?? null,
    analysis,
    width: original?.width ?? null,
    height: original?.height ?? null,
    currentVersion: item.currentVersion ?? null,
    renderVersion: item.renderVersion ?? null,
    current,
    proposed,
    decision: item.decision ?? null,
    decidedBy,
    decidedAt: item.decidedAt ? item.decidedAt.toISOString() : null,
    negativeAvailable: item.negativeAvailable ?? null,
    negativeLocation: item.negativeLocation ?? null,
    rescanNote: item.rescanNote ?? null,
    lockVersion: item.lockVersion,
    corrections,
    previous: previous?.id ?? null,
    next: next?.id ?? null,
  };
}

/** A moment written as everywhere else, in the archive's time zone, the zone named (a conflict may cross zones). */
async function when(d: Date, archiveId: string, transaction?: Transaction): Promise<string> {
  const zone = (await Archive.findByPk(archiveId, { attributes: ['timeZone'], transaction }))?.timeZone ?? DEFAULT_TIME_ZONE;
  return `${formatWhen(d, zone)} (${zone})`;
}

/** The 409 for a print that changed since the caller loaded it, naming who decided it and when. */
async function staleConflict(item: Item, transaction?: Transaction): Promise<AppError> {
  const who = await nameOf(item.decidedBy, transaction);
  const fields: Record<string, string> = { lockVersion: String(item.lockVersion) };
  let message: string;
  if (item.decision && item.decidedAt) {
    message = `${who?.name ?? 'Someone'} already decided this print (${DECISION_WORDS[item.decision as Decision]}) on ${await when(item.decidedAt, item.archiveId, transaction)}. Nothing of yours was saved: look at it again, then decide.`;
    fields.decision = item.decision;
    fields.decidedAt = item.decidedAt.toISOString();
    if (who) fields.decidedBy = who.name;
  } else {
    message = `This print was changed by someone else on ${await when(item.updatedAt, item.archiveId, transaction)}. Nothing of yours was saved: look at it again, then decide.`;
  }
  return new AppError(409, 'stale_print', message, fields);
}

function assertReady(item: Item) {
  if (item.state !== 'ready') {
    throw new Conflict(`This print is not ready to review (${STATE_WORDS[item.state as keyof typeof STATE_WORDS] ?? item.state}).`, 'not_ready');
  }
}

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

async function nextVersion(itemId: string, transaction: Transaction): Promise<number> {
  const max = (await Correction.max('version', { where: { itemId }, transaction })) as number | null;
  return (max ?? 0) + 1;
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
    const it = await itemForRole(locals, itemId, 'editor', transaction);
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
    await recordAudit(
      {
        archiveId: it.archiveId,
        actorId: userId,
        action: 'item.decide',
        subjectType: 'item',
        subjectId: it.id,
        details: { decision: input.decision, version, previous, negativeAvailable: values.negativeAvailable, negativeLocation: values.negativeLocation, rescanNote: values.rescanNote },
        requestId: locals.requestId,
      },
      transaction,
    );
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
  const batch = await Batch.findByPk(batchId, { attributes: ['id', 'archiveId'] });
  if (!batch) throw new NotFound('That batch');
  requireArchiveRole(locals, batch.archiveId, 'editor', 'That batch');
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
      await recordAudit(
        {
          archiveId: it.archiveId,
          actorId: userId,
          action: 'item.decide',
          subjectType: 'item',
          subjectId: it.id,
          details: { decision: values.decision, bulk: true, bulkId, lockVersionAfter: it.lockVersion, version: it.currentVersion, previous, negativeAvailable: values.negativeAvailable, negativeLocation: values.negativeLocation },
          requestId: locals.requestId,
        },
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
  const batch = await Batch.findByPk(batchId, { attributes: ['id', 'archiveId'] });
  if (!batch) throw new NotFound('That batch');
  requireArchiveRole(locals, batch.archiveId, 'editor', 'That batch');
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
    const it = await itemForRole(locals, itemId, 'editor', transaction);
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
  const item = await itemForRole(locals, itemId, 'editor');
  const old = await Correction.findOne({ where: { itemId: item.id, version } });
  if (!old) throw new NotFound(`Version ${version} of this print's correction`);
  const params = parseParams(old.params);
  if (!params) throw new Conflict(`Version ${version} was written in a format this version of Drawerlight cannot render.`, 'unreadable_version');
  return addVersion(locals, itemId, params, 'restored', undefined, { restoredFrom: version });
}

/** The correction history of a print. */
export async function correctionHistory(item: Item) {
  return { currentVersion: item.currentVersion ?? null, renderVersion: item.renderVersion ?? null, versions: await versionsOf(item.id) };
}

/**
 * A JPEG of part of a print's scan at full resolution (the 1:1 view), or of the whole scan
 * reduced to `max` pixels on its long side; of the original, or with a correction version
 * applied by the engine's tables.
 */
export async function cropImage(item: Item, q: CropQuery): Promise<{ body: Buffer; version: number | null; region: { x: number; y: number; w: number; h: number } }> {
  const original = await Original.findByPk(item.originalId);
  if (!original) throw new NotFound('The original scan of that print');
  const file = await storage().localPath(original.storageKey);
  const probe = await probeScan(file, { maxPixels: config().limits.maxPixels });
  let region = { x: 0, y: 0, w: probe.width, h: probe.height };
  if (q.x !== undefined && q.y !== undefined && q.w && q.h) {
    if (q.x >= probe.width || q.y >= probe.height) throw new InvalidInput(`The region starts outside the scan (${probe.width} x ${probe.height} pixels).`, { x: 'Outside the scan.' });
    region = { x: q.x, y: q.y, w: Math.min(q.w, probe.width - q.x), h: Math.min(q.h, probe.height - q.y) };
  }
  let version: number | null = null;
  let params: CorrectionParams | null = null;
  if (q.of === 'corrected') {
    version = q.version ?? item.currentVersion ?? null;
    const row = version ? await Correction.findOne({ where: { itemId: item.id, version } }) : null;
    params = row ? parseParams(row.params) : null;
    if (!params) throw new NotFound(q.version ? `Version ${q.version} of this print's correction` : "This print's correction");
  }
  let img = sharp(file, { limitInputPixels: probe.storedWidth * probe.storedHeight, failOn: 'truncated' }).rotate();
  if (probe.hasAlpha) img = img.flatten({ background: '#ffffff' });
  const whole = region.x === 0 && region.y === 0 && region.w === probe.width && region.h === probe.height;
  if (!whole) img = img.extract({ left: region.x, top: region.y, width: region.w, height: region.h });
  if (q.max) img = img.resize({ width: q.max, height: q.max, fit: 'inside', withoutEnlargement: true });
  img = img.toColourspace('srgb');
  let body: Buffer;
  if (params) {
    const { data, info } = await img.removeAlpha().raw().toBuffer({ resolveWithObject: true });
    const coloured = applyCorrection(new Uint8Array(data.buffer, data.byteOffset, data.length), info.channels, buildChannelLuts(params, 8, 8)) as Uint8Array;
    // the whole print is framed as its render is (turns and crop); a region stays in the upright scan's pixels
    const framed = whole && hasGeometry(params) ? applyGeometry(coloured, info.width, info.height, info.channels, geometryPlan(params, info.width, info.height)) : { data: coloured, width: info.width, height: info.height };
    const out = framed.data;
    body = await sharp(Buffer.from(out.buffer, out.byteOffset, out.byteLength), { raw: { width: framed.width, height: framed.height, channels: info.channels as 3 } })
      .jpeg({ quality: 90 })
      .toBuffer();
  } else {
    body = await img.jpeg({ quality: 90 }).toBuffer();
  }
  return { body, version, region };
}

/** A batch as the batch review page shows it, if the caller may see it; another archive's batch is 404. Its prints come a page at a time (review-list.ts). */
export async function batchOverview(locals: App.Locals, batchId: string): Promise<{ batch: Batch }> {
  const batch = await Batch.findByPk(batchId);
  if (!batch) throw new NotFound('That batch');
  requireArchiveRole(locals, batch.archiveId, 'viewer', 'That batch');
  return { batch };
}
