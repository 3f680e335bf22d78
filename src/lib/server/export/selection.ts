/** Which prints an export takes: chosen ones, a batch's accepted ones, or those accepted since the last export. */
import { Op, QueryTypes } from 'sequelize';
import { ArchiveExport, Batch, Item, db } from '../../../../db/index.ts';
import type { ExportSelection } from '../../archive/exports.ts';
import { Conflict, InvalidInput, NotFound } from '../errors.ts';

const ACCEPTED = ['accepted', 'accepted_adjusted'] as const;

/** When the last export that finished started: "since the last export" counts from there. */
async function lastExportStart(archiveId: string): Promise<Date | null> {
  const last = await ArchiveExport.findOne({ where: { archiveId, state: 'ready' }, order: [['createdAt', 'DESC']] });
  return last ? (last.startedAt ?? last.createdAt) : null;
}

/**
 * The prints a selection stands for, in batch and scan order: chosen prints (each must have a
 * corrected image), a batch's accepted prints, or every print accepted (or recaptioned) since
 * the last export.
 */
export async function resolveSelection(archiveId: string, selection: ExportSelection): Promise<string[]> {
  const order: [string, string][] = [['batchId', 'ASC'], ['seq', 'ASC']];
  if (selection.kind === 'items') {
    const ids = [...new Set(selection.itemIds.map((i) => i.toLowerCase()))];
    const items = await Item.findAll({ where: { id: { [Op.in]: ids }, archiveId }, attributes: ['id', 'currentVersion', 'seq', 'batchId'], order });
    const missing = ids.filter((id) => !items.some((i) => i.id === id));
    if (missing.length) throw new InvalidInput('Some of the chosen prints are not in this archive.', { 'selection.itemIds': `Unknown: ${missing.slice(0, 5).join(', ')}` });
    // the export renders any print whose full-size corrected image is not made yet; it needs a correction to render
    const unanalysed = items.filter((i) => !i.currentVersion);
    if (unanalysed.length) throw new Conflict(`${unanalysed.length} of the chosen prints have no correction yet; wait for their analysis to finish.`, 'not_ready');
    return items.map((i) => i.id);
  }
  if (selection.kind === 'batch') {
    const batch = await Batch.findOne({ where: { id: selection.batchId, archiveId } });
    if (!batch) throw new NotFound('That batch');
    const items = await Item.findAll({ where: { batchId: batch.id, decision: { [Op.in]: [...ACCEPTED] }, currentVersion: { [Op.ne]: null } }, attributes: ['id'], order });
    return items.map((i) => i.id);
  }
  const since = await lastExportStart(archiveId);
  const where: Record<string | symbol, unknown> = { archiveId, decision: { [Op.in]: [...ACCEPTED] }, currentVersion: { [Op.ne]: null } };
  if (since) where[Op.or] = [{ decidedAt: { [Op.gt]: since } }, { metadataUpdatedAt: { [Op.gt]: since } }];
  const items = await Item.findAll({ where, attributes: ['id'], order });
  return items.map((i) => i.id);
}

/** How many prints each choice would take now (for the export form). */
export async function selectionCounts(archiveId: string): Promise<{ sinceLast: number; lastExportAt: string | null; batches: { id: string; name: string; accepted: number }[] }> {
  const since = await lastExportStart(archiveId);
  const sinceLast = (await resolveSelection(archiveId, { kind: 'since_last' })).length;
  const batches = await db().query<{ id: string; name: string; n: string }>(
    `SELECT b.id, b.name, count(i.id) FILTER (WHERE i.decision IN ('accepted', 'accepted_adjusted') AND i.render_key IS NOT NULL) AS n
       FROM batches b LEFT JOIN items i ON i.batch_id = b.id AND i.deleted_at IS NULL WHERE b.archive_id = :archiveId AND b.deleted_at IS NULL GROUP BY b.id ORDER BY b.created_at DESC`,
    { replacements: { archiveId }, type: QueryTypes.SELECT },
  );
  return { sinceLast, lastExportAt: since ? since.toISOString() : null, batches: batches.map((b) => ({ id: b.id, name: b.name, accepted: Number(b.n) })) };
}

/** Prints ready to be chosen one by one: those with a corrected image, accepted ones first. */
export async function exportablePrints(archiveId: string, limit = 500): Promise<{ id: string; batchName: string; seq: number; caption: string | null; dateEdtf: string | null; decision: string | null; thumbnailUrl: string }[]> {
  const rows = await db().query<Record<string, unknown>>(
    `SELECT i.id, b.name AS batch_name, i.seq, i.caption, i.date_edtf, i.decision FROM items i JOIN batches b ON b.id = i.batch_id
      WHERE i.archive_id = :archiveId AND i.render_key IS NOT NULL AND i.deleted_at IS NULL
      ORDER BY (i.decision IN ('accepted', 'accepted_adjusted')) DESC NULLS LAST, b.created_at DESC, i.seq LIMIT :limit`,
    { replacements: { archiveId, limit }, type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    id: r.id as string,
    batchName: r.batch_name as string,
    seq: Number(r.seq),
    caption: (r.caption as string | null) ?? null,
    dateEdtf: (r.date_edtf as string | null) ?? null,
    decision: (r.decision as string | null) ?? null,
    thumbnailUrl: `/api/items/${r.id}/thumbnail`,
  }));
}
