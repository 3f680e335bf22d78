/**
 * Writing one export: corrected JPEGs with their captions embedded, in folders by year,
 * optionally the untouched originals alongside, and a CSV of every print, packed as a BagIt bag
 * (RFC 8493) in a zip that is streamed to storage and checked after writing. The work runs on the
 * `export` queue (jobs/export.ts); progress is kept on the export's row.
 */
import { createHash } from 'node:crypto';
import { PassThrough } from 'node:stream';
import { Op } from 'sequelize';
import { Archive, ArchiveExport, Batch, Item, Original, User } from '../../../../db/index.ts';
import { checkBag, describeBagReport } from '../../archive/bagit.ts';
import { spreadsheetCsv } from '../../archive/csv.ts';
import { parsePrintDate, type PrintDate } from '../../archive/edtf.ts';
import type { EmbeddedMetadata } from '../../archive/embed.ts';
import { ArchiveSite } from '../../archive/html-archive.ts';
import { DEFAULT_NAME_PATTERN, NameBook, baseName, batchSpanFolder, folderFor } from '../../archive/naming.ts';
import { sourceInWords } from '../../archive/source.ts';
import { ZipBagWriter, zipBagSource } from '../bag-files.ts';
import { backsOfItems } from '../backs.ts';
import { peopleOf } from '../captions.ts';
import { smallCopyKey } from '../files.ts';
import { storage } from '../storage.ts';
import { exportedJpeg, scanDateOf } from './embedding.ts';
import { notifyReady } from './mail.ts';
import { bagBaseName, exportKey } from './status.ts';

const CSV_COLUMNS = [
  'file', 'original_file', 'print_scan_file', 'seq', 'caption', 'date_edtf', 'date_in_words', 'place', 'people', 'source_kind', 'source_label', 'envelope',
  'text_on_back', 'batch', 'scan_file_name', 'original_sha256', 'print_scan_sha256', 'decision', 'item_id', 'back_file', 'back_sha256',
];

function dateOf(edtf: string | null | undefined): PrintDate | null {
  if (!edtf) return null;
  try {
    return parsePrintDate(edtf);
  } catch {
    return null;
  }
}

const EXT = { 'image/jpeg': '.jpg', 'image/png': '.png', 'image/tiff': '.tif' } as Record<string, string>;

/**
 * Runs one export: writes the bag into a zip streamed to storage, print by print (one in flight),
 * keeps progress on the row, verifies the zip's bag, and tells the requester. Idempotent: a
 * finished export is left alone; a retried one starts its zip again under the same key.
 */
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
  // each print's file names, claimed once, when its JPEG is made (the JPEG names its back's file)
  const placed = new Map<string, { date: PrintDate | null; folder: string; nameBase: string; photoPath: string; backPath: string }>();
  const requester = e.requestedBy ? await User.findByPk(e.requestedBy, { attributes: ['name', 'email'] }) : null;
  const site = new ArchiveSite({ archiveName: archive.name, madeBy: requester ? (requester.name ?? requester.email) : null, madeAt: new Date(), timeZone: archive.timeZone, exportId: e.id, includeOriginals: Boolean(opts.includeOriginals) });
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
      const backs = await backsOfItems(ids);
      const originalIds = [...new Set(items.flatMap((i) => [i.originalId, i.printOriginalId ?? null, backs.get(i.id)?.originalId ?? null]).filter((x): x is string => Boolean(x)))];
      const originals = new Map((await Original.findAll({ where: { id: originalIds } })).map((o) => [o.id, o]));
      const placeOf = (item: Item) => {
        let p = placed.get(item.id);
        if (p) return p;
        const batch = batches.get(item.batchId);
        const date = dateOf(item.dateEdtf);
        const folder = folderFor(date, batch ? batchSpanFolder(dateOf(batch.dateFrom), dateOf(batch.dateTo)) : null);
        const nameBase = baseName(pattern, { date, caption: item.caption ?? null, seq: item.seq, batch: batch?.name ?? null, originalName: item.originalName });
        const photoPath = names.claim(`photos/${folder}`, nameBase, '.jpg');
        // the back of the print, as scanned, beside it: "… 0007.jpg" and "… 0007_back.jpg"
        const back = backs.get(item.id);
        const backOriginal = back ? originals.get(back.originalId) : undefined;
        const backPath = backOriginal ? names.claim(`photos/${folder}`, `${photoPath.slice(photoPath.lastIndexOf('/') + 1, -'.jpg'.length)}_back`, EXT[backOriginal.mime] ?? '.bin') : '';
        p = { date, folder, nameBase, photoPath, backPath };
        placed.set(item.id, p);
        return p;
      };
      const metaOf = (item: Item): EmbeddedMetadata => {
        const batch = batches.get(item.batchId);
        const source = sourceInWords(batch?.sourceKind, batch?.sourceLabel, item.envelope);
        const backFile = placeOf(item).backPath.split('/').pop() || null;
        return { caption: item.caption ?? null, date: dateOf(item.dateEdtf), place: item.place ?? null, people: people.get(item.id) ?? [], source, backText: item.backText ?? null, scannedAt: scanDateOf(originals.get(item.originalId) ?? null), backFile };
      };
      const encode = (id: string | undefined): Promise<Buffer | null> => {
        const it = id ? byId.get(id) : undefined;
        if (!it?.currentVersion) return Promise.resolve(null);
        const p = exportedJpeg(it, originals.get(it.originalId), metaOf(it));
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
        const { date, folder, nameBase, photoPath, backPath } = placeOf(item);
        await bag.addPayload(photoPath, jpeg, { store: true });
        const backOriginal = backPath ? originals.get(backs.get(item.id)!.originalId) : undefined;
        if (backOriginal) await bag.addPayload(backPath, store.read(backOriginal.storageKey), { store: true });
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
          item.decision ?? '', item.id, backOriginal ? backPath : '', backOriginal?.sha256 ?? '',
        ]);
        // the browsable pages show the print's stored thumbnail as it is (no decode)
        const thumbKey = smallCopyKey(item, 'thumbnail');
        const thumb = thumbKey ? await store.readBuffer(thumbKey).catch(() => null) : null;
        const thumbPath = thumb ? ArchiveSite.thumbnailPath(done) : null;
        if (thumb && thumbPath) await bag.addPayload(thumbPath, thumb, { store: true });
        site.add({ photoPath, thumbPath, seq: item.seq, caption: item.caption ?? null, dateWords: date?.words ?? '', folder, source: sourceInWords(batch?.sourceKind, batch?.sourceLabel, null), place: item.place ?? null, people: people.get(item.id) ?? [] });
        // Saving progress for every print would cost a write per print; a few per second are enough for the bar.
        if (done - lastSaved >= Math.max(1, Math.floor(e.itemIds.length / 100)) || Date.now() - lastSavedAt > 500) {
          lastSaved = done;
          lastSavedAt = Date.now();
          await ArchiveExport.update({ progressDone: done }, { where: { id: e.id } });
        }
      }
    }
    await bag.addPayload('photos.csv', Buffer.from(spreadsheetCsv(records), 'utf8'));
    for (const [path, text] of site.files()) await bag.addPayload(path, Buffer.from(text, 'utf8'));
    await bag.finish([
      ['Source-Organization', archive.name],
      ['External-Description', `Photographs of the ${archive.name}: corrected JPEGs with captions embedded (XMP), ${opts.includeOriginals ? 'the untouched scans alongside, ' : ''}photos.csv listing every print, and index.html to look at them in any web browser.`],
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
