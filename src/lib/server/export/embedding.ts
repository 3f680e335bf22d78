/** The captions, dates and provenance an exported JPEG carries (EXIF, XMP, IPTC). */
import sharp from 'sharp';
import type { Original } from '../../../../db/index.ts';
import { buildExif, buildIptcFields, buildXmp, type EmbeddedMetadata } from '../../archive/embed.ts';
import { withIptc } from '../../archive/iptc.ts';

/** The EXIF DateTimeDigitized form of the scan date the original's EXIF recorded, if any. */
export function scanDateOf(o: Original | null): string | null {
  const v = (o?.exif as Record<string, unknown> | undefined)?.scanDate;
  return typeof v === 'string' ? v : null;
}

/** One corrected JPEG with the metadata embedded (re-encoded once by sharp at high quality). */
export async function embeddedJpeg(renderPath: string, meta: EmbeddedMetadata): Promise<Buffer> {
  const jpeg = await sharp(renderPath)
    .withIccProfile('srgb')
    .withExif(buildExif(meta))
    .withXmp(buildXmp(meta))
    .jpeg({ quality: 95, chromaSubsampling: '4:2:0' })
    .toBuffer();
  // sharp writes no IPTC; the IIM block goes in beside the segments it wrote
  return withIptc(jpeg, buildIptcFields(meta));
}
