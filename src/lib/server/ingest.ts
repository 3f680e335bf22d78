/**
 * The one ingest service: the web upload, the ingest command and the demo seed all take scans
 * in through {@link ingestScan}. A scan is streamed to storage while it is hashed (never held
 * whole in memory), judged by its bytes (the engine's header probe: JPEG, PNG and TIFF only,
 * pixel limit read from the header before anything is decoded), stored once per archive under
 * its SHA-256, described by its EXIF, and becomes an item of the batch with its analysis queued.
 */
import { randomUUID } from 'node:crypto';
import { open } from 'node:fs/promises';
import type { Readable } from 'node:stream';
import ExifReader from 'exifreader';
import { QueryTypes, literal, type Transaction } from 'sequelize';
import { Batch, Item, Original, db } from '../../../db/index.ts';
import { probeWithHead, ScanRejected, type ScanProbe } from '../restoration/imaging.ts';
import type { UploadLimits, UploadOutcome } from '../batches/schemas.ts';
import { recordAudit } from './audit.ts';
import { uploadLimits } from './body-limits.ts';
import { RefusedScan } from './errors.ts';
import { enqueueAnalyse } from './processing.ts';
import { storage } from './storage.ts';

export interface IngestInput {
  archiveId: string;
  batchId: string;
  /** Who is adding the scan (created_by and the audit log). */
  userId: string | null;
  /** The file's name (or relative path within a dropped folder) as the archivist knows it. */
  name: string;
  body: Readable | AsyncIterable<Uint8Array>;
  requestId?: string;
  /**
   * The upload this scan is part of (one drop of files, or one run of the command line). Scanners
   * write files in feed order, so the prints of one upload are numbered by file name in natural
   * order, whatever order their uploads finish in.
   */
  uploadKey?: string | null;
}

/** File names in natural order: "scan_2" before "scan_10", letter case aside. */
const naturalOrder = new Intl.Collator('en', { numeric: true, sensitivity: 'base' });

/**
 * Gives the prints of one upload the numbers they hold between them again, in the natural order
 * of their file names. Only that upload's numbers move: every other print keeps its own.
 */
async function numberByName(batchId: string, uploadKey: string, transaction: Transaction): Promise<void> {
  const group = await Item.findAll({ where: { batchId, uploadKey }, attributes: ['id', 'seq', 'originalName', 'createdAt'], transaction });
  if (group.length < 2) return;
  const numbers = group.map((i) => i.seq).sort((a, b) => a - b);
  const byName = [...group].sort((a, b) => naturalOrder.compare(a.originalName, b.originalName) || a.createdAt.getTime() - b.createdAt.getTime());
  const moves = byName.map((it, k) => ({ id: it.id, seq: numbers[k] })).filter((m) => group.find((g) => g.id === m.id)!.seq !== m.seq);
  if (moves.length === 0) return;
  // the unique index on (batch, number) is checked row by row: park the moving prints on negative numbers first
  const ids = moves.map((m) => m.id);
  await db().query('UPDATE items SET seq = -seq WHERE id IN (:ids)', { replacements: { ids }, transaction });
  for (const m of moves) await db().query('UPDATE items SET seq = :seq WHERE id = :id', { replacements: m, transaction });
}

const FORMAT_FILE = { jpeg: { mime: 'image/jpeg', ext: '.jpg' }, png: { mime: 'image/png', ext: '.png' }, tiff: { mime: 'image/tiff', ext: '.tif' } } as const;

/** A file name fit to show and store: no control characters, no more than 300 characters. */
export function cleanName(name: string): string {
  // eslint-disable-next-line no-control-regex
  const cleaned = name.replace(/[\u0000-\u001f\u007f]/g, '').replace(/\\/g, '/').trim();
  return (cleaned || 'unnamed scan').slice(-300);
}

const EXIF_HEAD_BYTES = 512 * 1024;

/**
 * What the scan's EXIF says about where and when it was made: capture and scan dates,
 * resolution, device and orientation. Read from the head of the file only (EXIF sits near the
 * start of JPEG, PNG and most TIFF files), so a large scan is not read twice into memory.
 */
export async function readScanExif(path: string, probe: ScanProbe, probedHead?: Buffer): Promise<Record<string, unknown>> {
  let head: Buffer;
  if (probedHead && (probedHead.length >= EXIF_HEAD_BYTES || probedHead.length === probe.bytes || probe.format === 'jpeg')) {
    // the probe's head holds a JPEG's EXIF (one APP1 segment of at most 64 KB, near the start)
    head = probedHead;
  } else {
    const fh = await open(path, 'r');
    try {
      head = Buffer.alloc(Math.min(EXIF_HEAD_BYTES, probe.bytes));
      await fh.read(head, 0, head.length, 0);
    } finally {
      await fh.close();
    }
  }
  let tags: Record<string, { description?: string; value?: unknown } | undefined> = {};
  try {
    tags = ExifReader.load(head) as unknown as typeof tags;
  } catch {
    tags = {};
  }
  const text = (name: string): string | undefined => {
    const d = tags[name]?.description;
    return typeof d === 'string' && d.trim() ? d.trim().slice(0, 200) : undefined;
  };
  const num = (name: string): number | undefined => {
    const v = tags[name]?.value;
    if (typeof v === 'number') return v;
    if (Array.isArray(v) && Array.isArray(v[0]) && typeof v[0][0] === 'number' && v[0][1]) return v[0][0] / v[0][1];
    if (Array.isArray(v) && typeof v[0] === 'number' && typeof v[1] === 'number' && v[1]) return v[0] / v[1];
    const d = Number(tags[name]?.description);
    return Number.isFinite(d) ? d : undefined;
  };
  const unit = text('ResolutionUnit');
  const out: Record<string, unknown> = {
    captureDate: text('DateTimeOriginal'),
    scanDate: text('DateTimeDigitized') ?? text('DateTime'),
    make: text('Make'),
    model: text('Model'),
    software: text('Software'),
    orientation: probe.orientation,
    resolution: probe.density ?? num('XResolution'),
    resolutionUnit: unit ? (/cm|centimet/i.test(unit) ? 'cm' : 'inch') : probe.density ? 'inch' : undefined,
    description: text('ImageDescription'),
    format: probe.format,
    bitsPerChannel: probe.bitsPerChannel,
    colourSpace: probe.space,
    iccProfile: probe.hasIccProfile,
  };
  for (const k of Object.keys(out)) if (out[k] === undefined) delete out[k];
  return out;
}

function outcomeOf(kind: 'added' | 'duplicate', item: Item, sha256: string, existing?: UploadOutcome['existing']): UploadOutcome {
  return {
    outcome: kind,
    item: { id: item.id, seq: item.seq, state: item.state, originalName: item.originalName, batchId: item.batchId },
    ...(existing ? { existing } : {}),
    sha256,
  };
}

async function duplicateOutcome(item: Item, sha256: string): Promise<UploadOutcome> {
  const batch = await Batch.findByPk(item.batchId);
  return outcomeOf('duplicate', item, sha256, { batchId: item.batchId, batchName: batch?.name ?? '', seq: item.seq, originalName: item.originalName });
}

/** What {@link storeScanOriginal} stored, or found already stored. */
export interface StoredScan {
  original: Original;
  sha256: string;
  probe: ScanProbe;
  /** False when the same bytes were already an original of this archive. */
  created: boolean;
}

/**
 * Streams one scan into the archive's originals, once: staged and hashed, judged by its bytes
 * and header, then linked write-once under its SHA-256 (or matched to the original that
 * already holds the same bytes). Makes no item; {@link ingestScan} and the rescan flow build on it.
 * @throws {RefusedScan} for a file that is not a scan we can take (type, size, pixels, damaged header), naming it
 * @throws {TooLarge} when the stream passes the byte limit
 */
export async function storeScanOriginal(input: Omit<IngestInput, 'batchId'>): Promise<StoredScan> {
  const limits = uploadLimits();
  const store = storage();
  // Staged under a key of its own, so a refused file never reaches the write-once originals.
  const stageKey = `incoming/${randomUUID()}.part`;
  try {
    // hashed as it is written: the store files it under that hash without reading it again
    const { sha256, bytes } = await store.stage(stageKey, input.body, { maxBytes: limits.maxBytes });
    if (bytes === 0) throw new ScanRejected('empty', 'The file is empty (0 bytes).');
    const stagePath = await store.localPath(stageKey);
    const { probe, head } = await probeWithHead(stagePath, { maxBytes: limits.maxBytes, maxPixels: limits.maxPixels });
    const existing = await Original.findOne({ where: { archiveId: input.archiveId, sha256 } });
    if (existing) return { original: existing, sha256, probe, created: false };
    const format = FORMAT_FILE[probe.format];
    // linked, not copied: the staged file becomes the original (its hash checked again on the way)
    const blob = await store.linkContentAddressed('originals', stageKey, sha256, { ext: format.ext });
    const exif = await readScanExif(stagePath, probe, head);
    // One statement: a concurrent upload of the same bytes may have made the row since the look above.
    const [inserted] = await db().query<Original>(
      `INSERT INTO originals (id, archive_id, sha256, storage_key, bytes, mime, width, height, exif, created_by, created_at)
       VALUES (gen_random_uuid(), :archiveId, :sha256, :storageKey, :bytes, :mime, :width, :height, :exif::jsonb, :createdBy, now())
       ON CONFLICT (archive_id, sha256) DO NOTHING RETURNING *`,
      {
        replacements: { archiveId: input.archiveId, sha256, storageKey: blob.key, bytes: blob.bytes, mime: format.mime, width: probe.width, height: probe.height, exif: JSON.stringify(exif), createdBy: input.userId ?? null },
        type: QueryTypes.SELECT,
        model: Original,
        mapToModel: true,
      },
    );
    if (inserted) return { original: inserted, sha256, probe, created: true };
    const found = await Original.findOne({ where: { archiveId: input.archiveId, sha256 } });
    if (!found) throw new Error(`the original ${sha256} was neither stored nor found`);
    return { original: found, sha256, probe, created: false };
  } catch (err) {
    throw err instanceof ScanRejected ? new RefusedScan(err, input.name) : err;
  } finally {
    await store.remove(stageKey).catch(() => undefined);
  }
}

/**
 * Takes one scan into a batch. Returns `added` with the new item (analysis queued), or
 * `duplicate` with the item that already holds the same bytes in this archive: nothing is
 * stored twice and no second item is made.
 * @throws {RefusedScan} for a file that is not a scan we can take (type, size, pixels, damaged header), naming it
 * @throws {TooLarge} when the stream passes the byte limit
 */
export async function ingestScan(input: IngestInput): Promise<UploadOutcome> {
  const name = cleanName(input.name);
  const { original, sha256, probe } = await storeScanOriginal(input);
  const originalId = original.id;
  const result = await db().transaction(async (transaction) => {
    // The batch row is the lock that hands out sequence numbers one at a time and lets
    // concurrent uploads of the same file meet here.
    // The lock first: a statement that waited for it sees the items committed meanwhile.
    await Batch.findByPk(input.batchId, { transaction, lock: transaction.LOCK.UPDATE, attributes: ['id'] });
    // The item that already holds these bytes: the one in this batch, else the archive's first.
    const holder = await Item.findOne({
      where: { archiveId: input.archiveId, originalId },
      order: [[literal(`(batch_id = ${db().escape(input.batchId)})`), 'DESC'], ['createdAt', 'ASC']],
      transaction,
    });
    if (holder) return { kind: 'duplicate' as const, item: holder };
    const seq = ((await Item.max<number, Item>('seq', { where: { batchId: input.batchId }, transaction })) ?? 0) + 1;
    const item = await Item.create({ archiveId: input.archiveId, batchId: input.batchId, originalId, seq, originalName: name, uploadKey: input.uploadKey ?? null }, { transaction });
    if (input.uploadKey) {
      await numberByName(input.batchId, input.uploadKey, transaction);
      await item.reload({ transaction });
    }
    await recordAudit(
      { archiveId: input.archiveId, actorId: input.userId, action: 'item.ingest', subjectType: 'item', subjectId: item.id, details: { name, sha256, bytes: original.bytes, batchId: input.batchId }, requestId: input.requestId },
      transaction,
    );
    return { kind: 'added' as const, item };
  });
  if (result.kind === 'duplicate') return duplicateOutcome(result.item, sha256);
  await enqueueAnalyse(result.item.id, probe.storedWidth * probe.storedHeight);
  return outcomeOf('added', result.item, sha256);
}
