/**
 * IPTC IIM (Information Interchange Model 4.2) in a JPEG's APP13 segment, for the photo programs
 * that read captions from IPTC rather than XMP. Text is UTF-8, declared by the coded character set
 * 1:90 = ESC % G (ISO 2022 escape for UTF-8, IIM 4.2 §1.5.90), so "Zoë" reads as "Zoë".
 * The segment also carries the IPTC digest (Photoshop image resource 0x0425, the MD5 of the IIM
 * block), by which readers following the Metadata Working Group guidelines know that the IIM and
 * XMP copies agree. Pure code: Buffers in, Buffers out.
 */
import { createHash } from 'node:crypto';

/** The IIM fields Drawerlight writes; each is optional. */
export interface IptcFields {
  /** 2:120 Caption-Abstract (at most 2000 bytes). */
  caption?: string | null;
  /** 2:25 Keywords (repeatable, at most 64 bytes each): people, then the place. */
  keywords?: string[];
  /** 2:55 Date Created, CCYYMMDD; "00" for a month or day not known (IIM 4.2 §1.5.55). */
  dateCreated?: string | null;
  /** 2:92 Sub-location (at most 32 bytes). */
  subLocation?: string | null;
}

/** ESC % G: "the text is UTF-8" (ISO 2022, IIM 4.2 dataset 1:90). */
export const UTF8_CODED_CHARACTER_SET = Buffer.from([0x1b, 0x25, 0x47]);

/** The UTF-8 bytes of `text`, cut to at most `max` bytes without splitting a character. */
export function utf8Within(text: string, max: number): Buffer {
  const out: Buffer[] = [];
  let used = 0;
  for (const ch of text.normalize('NFC')) {
    const b = Buffer.from(ch, 'utf8');
    if (used + b.length > max) break;
    out.push(b);
    used += b.length;
  }
  return Buffer.concat(out);
}

/** One dataset: tag marker 0x1C, record, dataset number, 2-byte length (values here stay under 32 KB). */
function dataset(record: number, number: number, value: Buffer): Buffer {
  const head = Buffer.from([0x1c, record, number, (value.length >> 8) & 0x7f, value.length & 0xff]);
  return Buffer.concat([head, value]);
}

/** The IIM block: record 1 (the character set), then record 2 in ascending dataset order. */
export function buildIptc(f: IptcFields): Buffer {
  const parts: Buffer[] = [dataset(1, 90, UTF8_CODED_CHARACTER_SET), dataset(2, 0, Buffer.from([0x00, 0x04]))];
  for (const k of f.keywords ?? []) {
    const b = utf8Within(k, 64);
    if (b.length) parts.push(dataset(2, 25, b));
  }
  if (f.dateCreated && /^\d{8}$/.test(f.dateCreated)) parts.push(dataset(2, 55, Buffer.from(f.dateCreated, 'ascii')));
  if (f.subLocation) parts.push(dataset(2, 92, utf8Within(f.subLocation, 32)));
  if (f.caption) parts.push(dataset(2, 120, utf8Within(f.caption, 2000)));
  return Buffer.concat(parts);
}

/** The IIM date (CCYYMMDD) of an XMP-style date "1981", "1981-07" or "1981-07-15". */
export function iptcDate(xmpDate: string | null | undefined): string | null {
  const m = /^(\d{4})(?:-(\d{2})(?:-(\d{2}))?)?$/.exec(xmpDate ?? '');
  return m ? `${m[1]}${m[2] ?? '00'}${m[3] ?? '00'}` : null;
}

/** A Photoshop image resource block: "8BIM", id, empty Pascal name (padded), size, data padded to even. */
function imageResource(id: number, data: Buffer): Buffer {
  const head = Buffer.alloc(12);
  head.write('8BIM', 0, 'latin1');
  head.writeUInt16BE(id, 4);
  // bytes 6-7: a zero-length name and its pad byte
  head.writeUInt32BE(data.length, 8);
  return Buffer.concat([head, data, data.length % 2 ? Buffer.alloc(1) : Buffer.alloc(0)]);
}

/** The APP13 segment (marker and length included) holding the IIM block and its digest. */
export function app13Segment(iim: Buffer): Buffer {
  const digest = createHash('md5').update(iim).digest();
  const payload = Buffer.concat([Buffer.from('Photoshop 3.0\0', 'latin1'), imageResource(0x0404, iim), imageResource(0x0425, digest)]);
  if (payload.length + 2 > 0xffff) throw new RangeError('The IPTC block does not fit one APP13 segment.');
  const head = Buffer.from([0xff, 0xed, 0, 0]);
  head.writeUInt16BE(payload.length + 2, 2);
  return Buffer.concat([head, payload]);
}

/**
 * `jpeg` with the IIM block added as APP13 after its other application segments (JFIF, EXIF,
 * XMP, ICC), replacing any APP13 it had. The image data is not touched.
 * @throws {Error} when `jpeg` is not a JPEG
 */
export function withIptc(jpeg: Buffer, f: IptcFields): Buffer {
  if (jpeg.length < 4 || jpeg[0] !== 0xff || jpeg[1] !== 0xd8) throw new Error('Not a JPEG: no start-of-image marker.');
  const kept: Buffer[] = [jpeg.subarray(0, 2)];
  let at = 2;
  for (;;) {
    if (at + 4 > jpeg.length || jpeg[at] !== 0xff) throw new Error('Not a JPEG: a segment marker is missing.');
    const marker = jpeg[at + 1];
    // APP0-APP15 and COM come before the tables and the frame; stop at the first other marker
    if (!((marker >= 0xe0 && marker <= 0xef) || marker === 0xfe)) break;
    const len = jpeg.readUInt16BE(at + 2);
    if (marker !== 0xed) kept.push(jpeg.subarray(at, at + 2 + len));
    at += 2 + len;
  }
  return Buffer.concat([...kept, app13Segment(buildIptc(f)), jpeg.subarray(at)]);
}
