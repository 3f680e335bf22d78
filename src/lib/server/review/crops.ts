/** Crops of a print's scan for the review's 1:1 view and its reduced previews. */
import { Correction, Original, type Item } from '../../../../db/index.ts';
import type { Correction as CorrectionParams } from '../../restoration/correction.ts';
import { cropScan, probeScan } from '../../restoration/imaging.ts';
import { COMPARE_SIDE, reviewCopySide } from '../../restoration/scan-sizes.ts';
import type { CropQuery } from '../../review/index.ts';
import { config } from '../config.ts';
import { InvalidInput, NotFound } from '../errors.ts';
import { scanCopyKey, storage } from '../storage.ts';
import { parseParams } from './history.ts';

/**
 * A JPEG of part of a print's scan at full resolution (the 1:1 view), or of the whole scan
 * reduced to `max` pixels on its long side; of the original, or with a correction version
 * applied by the engine's tables. The whole original reduced to a size the review asks for (the
 * compare view's, the print's review copy) is made once and kept (storage's `cache/`): every
 * review of a print asks for it, and making it decodes the whole scan (about 0.4 s for a
 * 3600 x 2400 JPEG here, where a kept copy is a file read). A region decodes the scan only down to
 * its bottom row.
 */
export async function cropImage(item: Item, q: CropQuery): Promise<{ body: Buffer; version: number | null; region: { x: number; y: number; w: number; h: number } }> {
  const original = await Original.findByPk(item.originalId);
  if (!original) throw new NotFound('The original scan of that print');
  let version: number | null = null;
  let params: CorrectionParams | null = null;
  if (q.of === 'corrected') {
    version = q.version ?? item.currentVersion ?? null;
    const row = version ? await Correction.findOne({ where: { itemId: item.id, version } }) : null;
    params = row ? parseParams(row.params) : null;
    if (!params) throw new NotFound(q.version ? `Version ${q.version} of this print's correction` : "This print's correction");
  }
  const store = storage();
  const asked = q.x !== undefined && q.y !== undefined && q.w && q.h ? { x: q.x, y: q.y, w: q.w, h: q.h } : null;
  // the original's size is on its row: a kept copy is served without opening the scan
  const { width, height } = original;
  const keptSides = width && height ? [COMPARE_SIDE, reviewCopySide(Math.max(width, height), original.mime === 'image/jpeg' ? 'jpeg' : 'png')] : [];
  const copyKey = !params && !asked && q.max && keptSides.includes(q.max) ? scanCopyKey(original.storageKey, q.max) : null;
  if (copyKey && width && height && (await store.exists(copyKey))) {
    return { body: await store.readBuffer(copyKey), version, region: { x: 0, y: 0, w: width, h: height } };
  }
  const file = await store.localPath(original.storageKey);
  const probe = await probeScan(file, { maxPixels: config().limits.maxPixels });
  let region = { x: 0, y: 0, w: probe.width, h: probe.height };
  if (asked) {
    if (asked.x >= probe.width || asked.y >= probe.height) throw new InvalidInput(`The region starts outside the scan (${probe.width} x ${probe.height} pixels).`, { x: 'Outside the scan.' });
    region = { x: asked.x, y: asked.y, w: Math.min(asked.w, probe.width - asked.x), h: Math.min(asked.h, probe.height - asked.y) };
  }
  const body = await cropScan(file, probe, { region, max: q.max, correction: params });
  if (copyKey) await store.put(copyKey, body);
  return { body, version, region };
}
