/** The detail of one print as the review workbench shows it. */
import { Op } from 'sequelize';
import { Batch, Item, Original, PrintBack } from '../../../../db/index.ts';
import type { Analysis } from '../../restoration/analysis.ts';
import type { Decision } from '../../review/index.ts';
import type { ItemDetail } from '../../review/types.ts';
import { parseParams, versionsOf } from './history.ts';
import { nameOf } from './names.ts';

export type { CorrectionVersion, ItemDetail, ItemRow } from '../../review/types.ts';

/** The detail of one print: analysis, current and proposed correction, history, decision, neighbours in its batch. */
export async function itemDetail(item: Item): Promise<ItemDetail> {
  const [batch, original, corrections, decidedBy, previous, next, back] = await Promise.all([
    Batch.findByPk(item.batchId, { attributes: ['name'] }),
    Original.findByPk(item.originalId, { attributes: ['width', 'height'] }),
    versionsOf(item.id),
    nameOf(item.decidedBy),
    Item.findOne({ where: { batchId: item.batchId, seq: { [Op.lt]: item.seq } }, order: [['seq', 'DESC']], attributes: ['id'] }),
    Item.findOne({ where: { batchId: item.batchId, seq: { [Op.gt]: item.seq } }, order: [['seq', 'ASC']], attributes: ['id'] }),
    PrintBack.findOne({ where: { frontItemId: item.id }, attributes: ['id', 'batchId', 'originalName'] }),
  ]);
  const analysis = (item.analysis as Analysis | null) ?? null;
  const current = corrections.find((c) => c.version === item.currentVersion)?.params ?? corrections.at(-1)?.params ?? null;
  // the newest of Drawerlight's own proposals: a batch-pooled one replaces the print's first
  const proposed = corrections.findLast((c) => c.origin === 'proposed' || c.origin === 'pooled')?.params ?? parseParams(analysis?.proposed) ?? null;
  return {
    id: item.id,
    back: back ? { id: back.id, batchId: back.batchId, originalName: back.originalName } : null,
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

/** Every print of a batch in scan order, as the workbench walks them (position, what is decided, what to load ahead). */
export async function reviewQueue(batchId: string): Promise<{ id: string; seq: number; decision: Decision | null; state: string }[]> {
  const rows = await Item.findAll({ where: { batchId }, order: [['seq', 'ASC']], attributes: ['id', 'seq', 'decision', 'state'] });
  return rows.map((r) => ({ id: r.id, seq: r.seq, decision: r.decision ?? null, state: r.state }));
}
