/** The captions, dates and provenance an exported JPEG carries (EXIF, XMP, IPTC). */
import { Correction, type Item, type Original } from '../../../../db/index.ts';
import { buildExif, buildIptcFields, buildXmp, type EmbeddedMetadata } from '../../archive/embed.ts';
import { withIptc } from '../../archive/iptc.ts';
import { correctionSchema } from '../../restoration/correction.ts';
import { renderCorrected, ScanRejected } from '../../restoration/imaging.ts';
import { uploadLimits } from '../body-limits.ts';
import { storage } from '../storage.ts';

/** The EXIF DateTimeDigitized form of the scan date the original's EXIF recorded, if any. */
export function scanDateOf(o: Original | null): string | null {
  const v = (o?.exif as Record<string, unknown> | undefined)?.scanDate;
  return typeof v === 'string' ? v : null;
}

/**
 * One corrected JPEG of a print with the metadata embedded: its current correction rendered
 * from the scan with the EXIF and XMP written by the same encode, so its pixels are the render's,
 * one generation from the scan (tests/integration/export/export.test.ts compares them). Measured
 * on a 3600 x 2400 scan here (loaded machine): this render 240-320 ms, against 660-1020 ms for
 * the earlier second generation (the stored render decoded and encoded again at quality 95, with
 * a colour transform for its profile). Inserting the metadata into the stored render without
 * re-encoding would take a few ms, but the EXIF libvips writes names the pixel size of the image
 * it encodes, so it cannot be made apart from it without writing EXIF by hand.
 * `null` for a print with no correction yet or a scan that no longer decodes.
 */
export async function exportedJpeg(item: Item, original: Original | undefined, meta: EmbeddedMetadata): Promise<Buffer | null> {
  if (!item.currentVersion || !original) return null;
  const row = await Correction.findOne({ where: { itemId: item.id, version: item.currentVersion } });
  if (!row) return null;
  let jpeg: Buffer;
  try {
    const scan = await storage().localPath(original.storageKey);
    jpeg = (await renderCorrected(scan, correctionSchema.parse(row.params), { metadata: { exif: buildExif(meta), xmp: buildXmp(meta) } }, uploadLimits())).buffer;
  } catch (err) {
    if (!(err instanceof ScanRejected)) throw err;
    console.error(`[export] item ${item.id}: ${err.message}`);
    return null;
  }
  // sharp writes no IPTC; the IIM block goes in beside the segments it wrote
  return withIptc(jpeg, buildIptcFields(meta));
}
