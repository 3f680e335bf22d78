/** Crops of a print's scan for the review's 1:1 view and its reduced previews. */
import sharp from 'sharp';
import { Correction, Original, type Item } from '../../../../db/index.ts';
import { applyCorrection, applyGeometry, buildChannelLuts, geometryPlan, hasGeometry, type Correction as CorrectionParams } from '../../restoration/correction.ts';
import { probeScan } from '../../restoration/imaging.ts';
import type { CropQuery } from '../../review/index.ts';
import { config } from '../config.ts';
import { InvalidInput, NotFound } from '../errors.ts';
import { storage } from '../storage.ts';
import { parseParams } from './history.ts';

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
