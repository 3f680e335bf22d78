/**
 * Exports of the family archive: corrected JPEGs with their captions embedded, in folders by
 * year, optionally the untouched originals alongside, and a CSV of every print, packed as a
 * BagIt bag (RFC 8493) in a zip that is streamed to storage and checked after writing. The
 * work runs on the `export` queue (jobs/export.ts); progress is kept on the export's row.
 */
import { createHash } from 'node:crypto';
import { PassThrough } from 'node:stream';
import sharp from 'sharp';
import { Op, QueryTypes } from 'sequelize';
import { Archive, ArchiveExport, Batch, Item, Original, User, db } from '../../../db/index.ts';
import type { ExportRequest, ExportSelection, ExportStatus } from '../archive/exports.ts';
import { checkBag, describeBagReport } from '../archive/bagit.ts';
import { spreadsheetCsv } from '../archive/csv.ts';
import { parsePrintDate, type PrintDate } from '../archive/edtf.ts';
import { buildExif, buildIptcFields, buildXmp, type EmbeddedMetadata } from '../archive/embed.ts';
import { withIptc } from '../archive/iptc.ts';
import { DEFAULT_NAME_PATTERN, NameBook, baseName, batchSpanFolder, folderFor } from '../archive/naming.ts';
import { sourceInWords } from '../archive/source.ts';
import { requireArchiveRole, requireCurrentArchive, requireUser } from './access.ts';
import { recordAudit } from './audit.ts';
import { ZipBagWriter, zipBagSource } from './bag-files.ts';
import { peopleOf } from './captions.ts';
import { currentRenderKey } from './renders.ts';
import { config } from './config.ts';
import { Conflict, InvalidInput, NotFound } from './errors.ts';
import { queueMail } from './mail-queue.ts';
import { linkMail } from './mailer.ts';
import { DEAD_LETTER_QUEUE, declareQueue, queue } from './queue.ts';
import { storage } from './storage.ts';

/** The export queue: one job per export, retried a little, given an hour for a large archive. */
export const EXPORT_QUEUE = declareQueue({
  name: 'export',
  options: { retryLimit: 2, retryDelay: 30, retryBackoff: true, expireInSeconds: 3600, retentionDays: 7, deadLetter: DEAD_LETTER_QUEUE },
});

export interface ExportJob {
  exportId: string;
}

const ACCEPTED = ['accepted', 'accepted_adjusted'] as const;

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
  const boss = await queue();
  await boss.createQueue(EXPORT_QUEUE.name, { name: EXPORT_QUEUE.name, ...EXPORT_QUEUE.options }).catch((err: Error) => {
    if (!/already exists/i.test(String(err?.message))) throw err;
  });
  await boss.send(EXPORT_QUEUE.name, { exportId: e.id } satisfies ExportJob);
  return exportStatus(e);
}

/** The export `id` if the caller holds `role` in its archive (404 for another archive's). */
export async function exportForCaller(locals: App.Locals, id: string, role: 'viewer' | 'editor'): Promise<ArchiveExport> {
  requireUser(locals);
  const e = await ArchiveExport.findByPk(id);
  if (!e || !locals.memberships.some((m) => m.archiveId === e.archiveId)) throw new NotFound('That export');
  requireArchiveRole(locals, e.archiveId, role, 'That export');
  return e;
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

function bagBaseName(archiveSlug: string, e: ArchiveExport): string {
  return `${archiveSlug}-export-${e.createdAt.toISOString().slice(0, 10)}-${e.id.slice(0, 8)}`;
}

/** Storage key of an export's zip. */
export const exportKey = (e: ArchiveExport) => `exports/${e.archiveId}/${e.id}.zip`;

const CSV_COLUMNS = [
  'file', 'original_file', 'print_scan_file', 'seq', 'caption', 'date_edtf', 'date_in_words', 'place', 'people', 'source_kind', 'source_label', 'envelope',
  'text_on_back', 'batch', 'scan_file_name', 'original_sha256', 'print_scan_sha256', 'decision', 'item_id',
];

/** The EXIF DateTimeDigitized form of the scan date the original's EXIF recorded, if any. */
function scanDateOf(o: Original | null): string | null {
  const v = (o?.exif as Record<string, unknown> | undefined)?.scanDate;
  return typeof v === 'string' ? v : null;
}

function dateOf(edtf: string | null | undefined): PrintDate | null {
  if (!edtf) return null;
  try {
    return parsePrintDate(edtf);
  } catch {
    return null;
  }
}

const EXT = { 'image/jpeg': '.jpg', 'image/png': '.png', 'image/tiff': '.tif' } as Record<string, string>;

/** One corrected JPEG with the metadata embedded (re-encoded once by sharp at high quality). */
async function embeddedJpeg(renderPath: string, meta: EmbeddedMetadata): Promise<Buffer> {
  const jpeg = await sharp(renderPath)
    .withIccProfile('srgb')
    .withExif(buildExif(meta))
    .withXmp(buildXmp(meta))
    .jpeg({ quality: 95, chromaSubsampling: '4:2:0' })
    .toBuffer();
  // sharp writes no IPTC; the IIM block goes in beside the segments it wrote
  return withIptc(jpeg, buildIptcFields(meta));
}

/**
 * Runs one export: writes the bag into a zip streamed to storage, print by print (one in flight),
 * keeps progress on the row, verifies the zip's bag, and tells the requester. Idempotent: a
 * finished export is left alone; a retried one starts its zip again under the same key.
 */
/**
 * Sends exports whose worker died back to the queue: state `running` with no progress saved for
 * `exportStallMs` (a live run saves progress at least every half second per print). The old job
 * stays leased until pg-boss expires it and then finds the export ready. Returns how many.
 */
export async function resumeStalledExports(now = Date.now()): Promise<number> {
  const stalled = await ArchiveExport.findAll({ where: { state: 'running', updatedAt: { [Op.lt]: new Date(now - config().exportStallMs) } }, attributes: ['id', 'updatedAt'] });
  let resumed = 0;
  for (const e of stalled) {
    // Only one sweeping worker wins the row: the update matches the time it saw.
    const [n] = await ArchiveExport.update({ state: 'queued' }, { where: { id: e.id, state: 'running', updatedAt: e.updatedAt } });
    if (!n) continue;
    await (await queue()).send(EXPORT_QUEUE.name, { exportId: e.id } satisfies ExportJob);
    resumed++;
  }
  return resumed;
}

export async function runExport(exportId: string): Promise<void> {
  const e = await ArchiveExport.findByPk(exportId);
  if (!e || e.state === 'ready') return;
  const archive = await Archive.findByPk(e.archiveId);
  if (!archive) return;
  await e.update({ state: 'running', step: 'packing', startedAt: e.startedAt ?? new Date(), progressDone: 0, progressTotal: e.itemIds.length, checkDone: 0, checkTotal: 0, failureReason: null });

  const store = storage();
  const key = exportKey(e);
  const out = new PassThrough();
  const stored = store.put(key, out);
  const base = bagBaseName(archive.slug, e);
  const bag = new ZipBagWriter(base, out);
  const opts = e.options ?? {};
  const pattern = opts.namePattern ?? DEFAULT_NAME_PATTERN;
  const names = new NameBook();
  const records: string[][] = [CSV_COLUMNS];
  let done = 0;
  let lastSaved = 0;
  let lastSavedAt = Date.now();
  try {
    // Items are read in pages, so a large archive's rows are not all held at once.
    const PAGE = 50;
    for (let start = 0; start < e.itemIds.length; start += PAGE) {
      const ids = e.itemIds.slice(start, start + PAGE);
      const items = await Item.findAll({ where: { id: { [Op.in]: ids } } });
      const byId = new Map(items.map((i) => [i.id, i]));
      const people = await peopleOf(ids);
      const batches = new Map((await Batch.findAll({ where: { id: [...new Set(items.map((i) => i.batchId))] } })).map((b) => [b.id, b]));
      const originalIds = [...new Set(items.flatMap((i) => [i.originalId, i.printOriginalId ?? null]).filter((x): x is string => Boolean(x)))];
      const originals = new Map((await Original.findAll({ where: { id: originalIds } })).map((o) => [o.id, o]));
      const metaOf = (item: Item): EmbeddedMetadata => {
        const batch = batches.get(item.batchId);
        const source = sourceInWords(batch?.sourceKind, batch?.sourceLabel, item.envelope);
        return { caption: item.caption ?? null, date: dateOf(item.dateEdtf), place: item.place ?? null, people: people.get(item.id) ?? [], source, backText: item.backText ?? null, scannedAt: scanDateOf(originals.get(item.originalId) ?? null) };
      };
      const encode = (id: string | undefined): Promise<Buffer | null> => {
        const it = id ? byId.get(id) : undefined;
        if (!it?.currentVersion) return Promise.resolve(null);
        // a print whose full-size render has not been made yet (or is of an older version) is rendered here first
        const p = currentRenderKey(it).then(async (key) => (key ? embeddedJpeg(await store.localPath(key), metaOf(it)) : null));
        // Awaited in turn below; marked handled now so a failure while the zip is busy cannot crash the worker.
        p.catch(() => undefined);
        return p;
      };
      // The next print's JPEG is encoded while this one goes into the zip, so both cores work (STACK.md).
      let upcoming = encode(ids[0]);
      for (let k = 0; k < ids.length; k++) {
        const item = byId.get(ids[k]);
        const jpeg = await upcoming;
        upcoming = encode(ids[k + 1]);
        done++;
        if (!item || !jpeg) continue;
        const batch = batches.get(item.batchId);
        const original = originals.get(item.originalId) ?? null;
        const printOriginal = item.printOriginalId ? (originals.get(item.printOriginalId) ?? null) : null;
        const date = dateOf(item.dateEdtf);
        const folder = folderFor(date, batch ? batchSpanFolder(dateOf(batch.dateFrom), dateOf(batch.dateTo)) : null);
        const nameBase = baseName(pattern, { date, caption: item.caption ?? null, seq: item.seq, batch: batch?.name ?? null, originalName: item.originalName });
        const photoPath = names.claim(`photos/${folder}`, nameBase, '.jpg');
        await bag.addPayload(photoPath, jpeg, { store: true });
        let originalPath = '';
        let printPath = '';
        if (opts.includeOriginals && original) {
          originalPath = names.claim(`originals/${folder}`, nameBase, EXT[original.mime] ?? '.bin');
          await bag.addPayload(originalPath, store.read(original.storageKey), { store: true });
          if (printOriginal) {
            printPath = names.claim(`originals/${folder}`, `${nameBase} print scan`, EXT[printOriginal.mime] ?? '.bin');
            await bag.addPayload(printPath, store.read(printOriginal.storageKey), { store: true });
          }
        }
        records.push([
          photoPath, originalPath, printPath, String(item.seq), item.caption ?? '', item.dateEdtf ?? '', date?.words ?? '', item.place ?? '', (people.get(item.id) ?? []).join('; '),
          batch?.sourceKind ?? '', batch?.sourceLabel ?? '', item.envelope ?? '', item.backText ?? '', batch?.name ?? '', item.originalName, original?.sha256 ?? '', printOriginal?.sha256 ?? '',
          item.decision ?? '', item.id,
        ]);
        // Saving progress for every print would cost a write per print; a few per second are enough for the bar.
        if (done - lastSaved >= Math.max(1, Math.floor(e.itemIds.length / 100)) || Date.now() - lastSavedAt > 500) {
          lastSaved = done;
          lastSavedAt = Date.now();
          await ArchiveExport.update({ progressDone: done }, { where: { id: e.id } });
        }
      }
    }
    await bag.addPayload('photos.csv', Buffer.from(spreadsheetCsv(records), 'utf8'));
    await bag.finish([
      ['Source-Organization', archive.name],
      ['External-Description', `Photographs of the ${archive.name}: corrected JPEGs with captions embedded (XMP), ${opts.includeOriginals ? 'the untouched scans alongside, ' : ''}and photos.csv listing every print.`],
      ['External-Identifier', e.id],
      ['Bag-Software-Agent', 'Drawerlight'],
    ]);
    const written = await stored;

    // The bag is checked as a reader will find it: from the zip on disk, every checksum recomputed.
    // For hundreds of prints that takes a while, and the page says so (checked files, a few times a second).
    await ArchiveExport.update({ progressDone: e.itemIds.length, step: 'checking' }, { where: { id: e.id } });
    const source = await zipBagSource(await store.localPath(key));
    let report;
    let checkSavedAt = 0;
    try {
      report = await checkBag(source, async (checked, listed) => {
        if (checked !== 0 && checked !== listed && Date.now() - checkSavedAt < 500) return;
        checkSavedAt = Date.now();
        await ArchiveExport.update({ checkDone: checked, checkTotal: listed }, { where: { id: e.id } });
      });
    } finally {
      source.close();
    }
    if (!report.ok) throw new Error(`The written bag failed its check: ${describeBagReport(report).slice(0, 5).join('; ')}`);
    const zipSha = await sha256Of(key);
    await e.update({ state: 'ready', step: null, progressDone: e.itemIds.length, checkDone: report.payloadFiles, checkTotal: report.payloadFiles, zipKey: key, zipBytes: written.bytes, zipSha256: zipSha, verifiedAt: new Date(), finishedAt: new Date() });
  } catch (err) {
    bag.abort();
    out.destroy();
    await stored.catch(() => undefined);
    await store.remove(key).catch(() => undefined);
    await e.update({ state: 'failed', step: null, failureReason: String((err as Error)?.message ?? err).slice(0, 1000), finishedAt: new Date() });
    throw err;
  }
  await notifyReady(e, archive);
}

async function sha256Of(key: string): Promise<string> {
  const hash = createHash('sha256');
  for await (const chunk of storage().read(key)) hash.update(chunk as Buffer);
  return hash.digest('hex');
}

async function notifyReady(e: ArchiveExport, archive: Archive): Promise<void> {
  const user = e.requestedBy ? await User.findByPk(e.requestedBy) : null;
  if (!user) return;
  const mb = ((e.zipBytes ?? 0) / 1048576).toFixed(1);
  // through the mail queue: the export is already marked ready, so a send that failed here would be lost
  await queueMail(
    linkMail(
      user.email,
      `Your export of the ${archive.name} is ready`,
      `The export you asked for is ready: ${e.itemIds.length} prints, ${mb} MB, packed as a BagIt bag and checked after writing (every checksum matched).`,
      'Download it from the export page',
      `${config().appUrl}/export#export-${e.id}`,
      'Keep at least three copies on two kinds of media, one of them elsewhere, and check the checksums now and then (npm run verify-bag).',
    ),
  );
}
