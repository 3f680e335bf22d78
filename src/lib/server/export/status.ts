/** An export as the API and pages show it, found for a caller; its file's name and storage key. */
import { ArchiveExport } from '../../../../db/index.ts';
import type { ExportStatus } from '../../archive/exports.ts';
import { requireArchiveRole, requireUser } from '../access.ts';
import { Conflict, NotFound } from '../errors.ts';
import { storage } from '../storage.ts';

/** Shapes an export row for the API. */
export function exportStatus(e: ArchiveExport): ExportStatus {
  const total = e.progressTotal;
  return {
    id: e.id,
    state: e.state,
    selection: e.selection,
    options: e.options ?? {},
    items: e.itemIds.length,
    progress: { done: e.progressDone, total, percent: total ? Math.min(100, Math.round((100 * e.progressDone) / total)) : e.state === 'ready' ? 100 : 0 },
    step: e.state === 'running' ? (e.step ?? 'packing') : null,
    check: { done: e.checkDone ?? 0, total: e.checkTotal ?? 0 },
    zipBytes: e.zipBytes ?? null,
    zipSha256: e.zipSha256 ?? null,
    verified: Boolean(e.verifiedAt),
    failureReason: e.failureReason ?? null,
    createdAt: e.createdAt.toISOString(),
    finishedAt: e.finishedAt ? e.finishedAt.toISOString() : null,
    downloadUrl: e.state === 'ready' && e.zipKey ? `/api/exports/${e.id}/download` : null,
    statusUrl: `/api/exports/${e.id}`,
  };
}

/** The export `id` if the caller holds `role` in its archive (404 for another archive's). */
export async function exportForCaller(locals: App.Locals, id: string, role: 'viewer' | 'editor'): Promise<ArchiveExport> {
  requireUser(locals);
  const e = await ArchiveExport.findByPk(id);
  if (!e || !locals.memberships.some((m) => m.archiveId === e.archiveId)) throw new NotFound('That export');
  requireArchiveRole(locals, e.archiveId, role, 'That export');
  return e;
}

/** A ready export's zip for download (editors): its storage key, size, file name and SHA-256; 409 while it is not ready. */
export async function exportDownload(locals: App.Locals, id: string): Promise<{ key: string; bytes: number; fileName: string; sha256: string | null }> {
  const e = await exportForCaller(locals, id, 'editor');
  if (e.state !== 'ready' || !e.zipKey) throw new Conflict('That export is not ready yet.', 'not_ready');
  const st = await storage().stat(e.zipKey);
  if (!st) throw new NotFound('That export\'s zip');
  const slug = locals.memberships.find((m) => m.archiveId === e.archiveId)?.slug ?? 'archive';
  return { key: e.zipKey, bytes: st.bytes, fileName: exportFileName(slug, e), sha256: e.zipSha256 ?? null };
}

/** An archive's exports, newest first. */
export async function listExports(archiveId: string, limit = 30): Promise<ExportStatus[]> {
  const rows = await ArchiveExport.findAll({ where: { archiveId }, order: [['createdAt', 'DESC']], limit });
  return rows.map(exportStatus);
}

/** The file name a downloaded export gets. */
export function exportFileName(archiveSlug: string, e: ArchiveExport): string {
  return `${bagBaseName(archiveSlug, e)}.zip`;
}

/** The name of an export's bag: its folder in the zip. */
export function bagBaseName(archiveSlug: string, e: ArchiveExport): string {
  return `${archiveSlug}-export-${e.createdAt.toISOString().slice(0, 10)}-${e.id.slice(0, 8)}`;
}

/** Storage key of an export's zip. */
export const exportKey = (e: ArchiveExport) => `exports/${e.archiveId}/${e.id}.zip`;
