/** Asking for an export: the row that records it and the job that writes it. */
import { ArchiveExport } from '../../../../db/index.ts';
import type { ExportRequest, ExportStatus } from '../../archive/exports.ts';
import { requireCurrentArchive } from '../access.ts';
import { recordAudit } from '../audit.ts';
import { Conflict } from '../errors.ts';
import { sendJob } from '../queue.ts';
import { resolveSelection } from './selection.ts';
import { exportStatus } from './status.ts';

/** Records an export and queues its job (editors). */
export async function requestExport(locals: App.Locals, input: ExportRequest): Promise<ExportStatus> {
  const m = requireCurrentArchive(locals, 'editor');
  const itemIds = await resolveSelection(m.archiveId, input.selection);
  if (!itemIds.length) throw new Conflict('Nothing to export: no accepted prints with a corrected image in that choice.', 'nothing_to_export');
  const e = await ArchiveExport.create({
    archiveId: m.archiveId,
    requestedBy: locals.user!.id,
    selection: input.selection,
    options: { includeOriginals: input.includeOriginals, namePattern: input.namePattern },
    itemIds,
    progressTotal: itemIds.length,
  });
  await recordAudit({ archiveId: m.archiveId, actorId: locals.user!.id, action: 'export.request', subjectType: 'export', subjectId: e.id, details: { selection: input.selection.kind, items: itemIds.length, includeOriginals: input.includeOriginals }, requestId: locals.requestId });
  await sendJob('export', { exportId: e.id });
  return exportStatus(e);
}
