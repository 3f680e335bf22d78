/**
 * The image module: the only file that imports sharp (libvips). It probes scans, decodes them,
 * makes the review copies, renders corrections (with an export's metadata when asked), crops
 * for the review's 1:1 view and writes the demo's scan files, for the job worker's engine threads,
 * the web server (an upload's probe, the crops), the export and the command line alike.
 * Everything else under src/lib/restoration is pure and runs in the browser too; the sizes and
 * limits others need without decoding anything are in scan-sizes.ts.
 *
 * One full decode per scan: {@link analyseAndRender} decodes the oriented sRGB pixels once and
 * derives the analysis copy, the render and the previews from that single buffer.
 */
import { readFileSync } from 'node:fs';
import { readFile, stat, open } from 'node:fs/promises';
import { createRequire } from 'node:module';
import type ExifReaderModule from 'exifreader';
import sharp from 'sharp';
import { analysePixels, samplePixels, type Analysis, type ReducedPixels } from './analysis';
import { applyCorrection, applyGeometry, buildChannelLuts, correctionSchema, geometryPlan, hasGeometry, isIdentity, type Correction } from './correction';
import { ScanRejected } from './errors';
import { ANALYSIS_SIDE, DEFAULT_LIMITS, reviewCopySide, type ScanFormat } from './scan-sizes';
import { measureBack, type BackMeasure } from '../backs/paper-back';
import { fingerprint } from '../images/fingerprint';

export { ScanRejected } from './errors';

export { ANALYSIS_MIN_SIDE, ANALYSIS_SIDE, DEFAULT_LIMITS, reviewCopySide, type ScanFormat } from './scan-sizes';

/** What the header of a scan says, read without decoding the pixels. */
export interface ScanProbe {
  /** Raw EXIF block, when the file has one (not serialised into reports). */
  exif?: Buffer;
  format: ScanFormat;
  /** Size after EXIF orientation is applied: the size of every render. */
  width: number;
  height: number;
  /** Size as stored in the file. */
  storedWidth: number;
  storedHeight: number;
  orientation: number;
  channels: number;
  bitsPerChannel: 8 | 16;
  /** libvips' name for the stored colour space: 'srgb', 'b-w', 'cmyk', 'rgb16', 'grey16'... */
  space: string;
  hasAlpha: boolean;
  hasIccProfile: boolean;
  /** Pixels per inch, when the file records it. */
  density?: number;
  bytes: number;
}

export interface ScanLimits {
  maxPixels: number;
  maxBytes: number;
}

function sniff(head: Buffer): ScanFormat | string {
  if (head.length >= 3 && head[0] === 0xff && head[1] === 0xd8 && head[2] === 0xff) return 'jpeg';
  if (head.length >= 8 && head.subarray(0, 8).equals(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]))) return 'png';
  if (head.length >= 4 && ((head[0] === 0x49 && head[1] === 0x49 && (head[2] === 0x2a || head[2] === 0x2b) && head[3] === 0) || (head[0] === 0x4d && head[1] === 0x4d && head[2] === 0 && (head[3] === 0x2a || head[3] === 0x2b)))) return 'tiff';
  const text = head.toString('latin1').trimStart().toLowerCase();
  if (text.startsWith('<svg') || (text.startsWith('<?xml') && text.includes('<svg'))) return 'an SVG drawing';
  if (text.startsWith('<!doctype html') || text.startsWith('<html')) return 'a web page (HTML)';
  if (text.startsWith('<')) return 'an XML or HTML document';
  if (head.subarray(0, 4).toString('latin1') === 'RIFF') return 'a WebP or other RIFF file';
  if (head.subarray(0, 4).toString('latin1') === 'GIF8') return 'a GIF image';
  if (head.subarray(0, 5).toString('latin1') === '%PDF-') return 'a PDF document';
  const printable = [...head].filter((b) => b === 9 || b === 10 || b === 13 || (b >= 32 && b < 127)).length;
  if (head.length > 0 && printable / head.length > 0.95) return 'a text file';
  return 'not a JPEG, PNG or TIFF image';
}

const SNIFF_BYTES = 512;
/**
 * The head of a file read for its probe: JPEG and PNG headers (and the EXIF block, at most 64 KB
 * in a JPEG) sit at the start. libvips asked for the metadata of a file path opens and seeks it
 * once per image loader it tries (about 16 opens per scan); asked for a buffer of the head, none.
 */
const PROBE_HEAD_BYTES = 256 * 1024;

async function headOf(input: string | Buffer, size = SNIFF_BYTES): Promise<{ head: Buffer; bytes: number }> {
  if (Buffer.isBuffer(input)) return { head: input.subarray(0, size), bytes: input.length };
  let st;
  try {
    st = await stat(input);
  } catch (err) {
    throw new ScanRejected('unreadable', `The file could not be opened: ${(err as NodeJS.ErrnoException).code ?? 'error'}.`, { cause: err });
  }
  if (!st.isFile()) throw new ScanRejected('unreadable', 'This is not a regular file.');
  const fh = await open(input, 'r');
  try {
    const head = Buffer.alloc(Math.min(size, st.size));
    await fh.read(head, 0, head.length, 0);
    return { head, bytes: st.size };
  } finally {
    await fh.close();
  }
}

/**
 * Reads the header of a scan and refuses what must not be decoded: empty files, anything that is
 * not JPEG, PNG or TIFF (text, HTML, SVG are refused by type, never rendered), files over the
 * byte limit, and images whose header claims more pixels than the limit (decompression bombs).
 * @throws {ScanRejected}
 */
export async function probeScan(input: string | Buffer, limits: Partial<ScanLimits> = {}): Promise<ScanProbe> {
  return (await probeWithHead(input, limits)).probe;
}

/** `1,440,000 pixels, 1.44 megapixels`: the exact count beside the rounded one, which alone can read the same as the limit. */
function pixelCount(pixels: number): string {
  return `${pixels.toLocaleString('en-US')} pixels, ${Number((pixels / 1e6).toFixed(2))} megapixels`;
}

/**
 * {@link probeScan}, also handing back the head of the file it read (up to 256 KB; the whole
 * file when it is smaller), where the caller looks for EXIF.
 * @throws {ScanRejected}
 */
export async function probeWithHead(input: string | Buffer, limits: Partial<ScanLimits> = {}): Promise<{ probe: ScanProbe; head: Buffer }> {
  const lim = { ...DEFAULT_LIMITS, ...limits };
  const { head, bytes } = await headOf(input, PROBE_HEAD_BYTES);
  if (bytes === 0) throw new ScanRejected('empty', 'The file is empty (0 bytes).');
  if (bytes > lim.maxBytes) throw new ScanRejected('too_large', `The file is ${Math.round(bytes / 1048576)} MB; the limit is ${Math.round(lim.maxBytes / 1048576)} MB.`);
  const kind = sniff(head.subarray(0, SNIFF_BYTES));
  if (kind !== 'jpeg' && kind !== 'png' && kind !== 'tiff') {
    throw new ScanRejected('unsupported_type', `This is ${kind}, not a scan: only JPEG, PNG and TIFF images are taken.`);
  }
  // header only: metadata() does not decode pixels, so a bomb is measured, not expanded
  const metadata = (from: string | Buffer) => sharp(from, { limitInputPixels: false }).metadata();
  let meta: sharp.Metadata | undefined;
  if (typeof input === 'string' && kind !== 'tiff' && head.length < bytes) {
    // a TIFF's directory may sit anywhere in the file; a JPEG or PNG header is in its head,
    // unless a very large embedded profile pushes it further: then the file is asked
    meta = await metadata(head).catch(() => undefined);
    if (!meta?.width || !meta.height) meta = undefined;
  }
  try {
    meta ??= await metadata(typeof input === 'string' && head.length === bytes ? head : input);
  } catch (err) {
    throw new ScanRejected('unreadable', `The ${kind.toUpperCase()} header is damaged and cannot be read.`, { cause: err });
  }
  const w = meta.width ?? 0;
  const h = meta.height ?? 0;
  if (w < 1 || h < 1) throw new ScanRejected('unreadable', 'The image header gives no size.');
  if (w * h > lim.maxPixels) {
    throw new ScanRejected('too_many_pixels', `The image claims ${w} x ${h} pixels (${pixelCount(w * h)}); the limit is ${pixelCount(lim.maxPixels)}.`);
  }
  const orientation = meta.orientation ?? 1;
  const swap = orientation >= 5 && orientation <= 8;
  const sixteen = meta.depth === 'ushort' || meta.space === 'rgb16' || meta.space === 'grey16';
  const probe: ScanProbe = {
    format: kind,
    width: swap ? h : w,
    height: swap ? w : h,
    storedWidth: w,
    storedHeight: h,
    orientation,
    channels: meta.channels ?? 3,
    bitsPerChannel: sixteen ? 16 : 8,
    space: meta.space ?? 'srgb',
    hasAlpha: meta.hasAlpha ?? false,
    hasIccProfile: Boolean(meta.icc),
    density: meta.density,
    bytes,
    exif: meta.exif,
  };
  return { probe, head };
}

function decodeError(err: unknown): ScanRejected {
  if (err instanceof ScanRejected) return err;
  const msg = String((err as Error)?.message ?? err);
  const cutShort = () => new ScanRejected('unreadable', 'The image is cut short (the file is incomplete or was not fully copied).', { cause: err });
  const damaged = () => new ScanRejected('unreadable', 'The image data is damaged and cannot be decoded.', { cause: err });
  // The file itself ended early (libjpeg and libvips say "premature end of JPEG file/image").
  if (/premature end of (JPEG |input )?(file|image)|truncat|end of file|short read|unexpected end/i.test(msg)) return cutShort();
  // Damaged entropy data inside a whole file: libjpeg's words ("Corrupt JPEG data: premature end of
  // data segment") also say "premature", so this is asked before the looser test below.
  if (/Corrupt JPEG data/i.test(msg)) return damaged();
  if (/premature|end of data/i.test(msg)) return cutShort();
  return damaged();
}

/**
 * A decoding pipeline that yields oriented, flattened, sRGB pixels: EXIF orientation applied,
 * embedded ICC profile (or CMYK) converted to sRGB, alpha composited on white paper, greyscale
 * expanded to three channels.
 */
function decoder(input: string | Buffer, probe: ScanProbe, keep16: boolean): sharp.Sharp {
  let img = sharp(input, {
    // A JPEG whose entropy data is damaged still decodes (grey or smeared blocks) with only a
    // libjpeg warning ("Corrupt JPEG data: …"): refused here, so the print is marked damaged
    // instead of passing as a good scan. libtiff's and libpng's warnings are mostly harmless.
    failOn: probe.format === 'jpeg' ? 'warning' : 'truncated',
    limitInputPixels: probe.storedWidth * probe.storedHeight,
    sequentialRead: true,
  }).rotate();
  if (probe.hasAlpha) img = img.flatten({ background: '#ffffff' });
  return img.toColourspace(keep16 && probe.bitsPerChannel === 16 ? 'rgb16' : 'srgb');
}

/**
 * Decodes a reduced copy for analysis (shrink-on-load where the format allows), always 8-bit RGB.
 * @throws {ScanRejected}
 */
export async function loadReduced(input: string | Buffer, longSide = ANALYSIS_SIDE, limits?: Partial<ScanLimits>): Promise<ReducedPixels> {
  return decodeReduced(input, await probeScan(input, limits), longSide);
}

/**
 * The reduced decode of a probed scan. A JPEG is decoded at 1/2, 1/4 or 1/8 scale by the decoder
 * itself (libjpeg's scaled DCT) and only the rest is reduced by a filter; `kernel` names that filter.
 */
async function decodeReduced(input: string | Buffer, probe: ScanProbe, longSide: number, kernel: keyof sharp.KernelEnum = 'lanczos3'): Promise<ReducedPixels> {
  try {
    const { data, info } = await decoder(input, probe, false)
      .resize({ width: longSide, height: longSide, fit: 'inside', withoutEnlargement: true, kernel })
      .raw()
      .toBuffer({ resolveWithObject: true });
    return { data: new Uint8Array(data.buffer, data.byteOffset, data.length), width: info.width, height: info.height, channels: info.channels, depth: 8 };
  } catch (err) {
    throw decodeError(err);
  }
}

/** Full-resolution oriented sRGB pixels of a scan, 8 or 16 bits per channel. */
export interface FullPixels extends ReducedPixels {
  probe: ScanProbe;
}

/** Decodes the whole scan once, keeping 16 bits per channel when the file has them. @throws {ScanRejected} */
export async function loadFull(input: string | Buffer, limits?: Partial<ScanLimits>, probe?: ScanProbe): Promise<FullPixels> {
  const p = probe ?? (await probeScan(input, limits));
  try {
    const { data, info } = await decoder(input, p, true).raw({ depth: p.bitsPerChannel === 16 ? 'ushort' : 'uchar' }).toBuffer({ resolveWithObject: true });
    if (p.bitsPerChannel === 16) {
      const aligned = data.byteOffset % 2 === 0 ? data : Buffer.from(data);
      return { data: new Uint16Array(aligned.buffer, aligned.byteOffset, aligned.length / 2), width: info.width, height: info.height, channels: info.channels, depth: 16, probe: p };
    }
    return { data: new Uint8Array(data.buffer, data.byteOffset, data.length), width: info.width, height: info.height, channels: info.channels, depth: 8, probe: p };
  } catch (err) {
    throw decodeError(err);
  }
}

/**
 * The small copy of pixels already decoded: one libvips reduction (linear filter, which averages
 * the pixels it drops) to `longSide`, always 8-bit RGB, always a buffer of its own (so the full
 * pixels may be corrected in place afterwards). It is the analysis copy and the source of every
 * preview and thumbnail, so no other reduction of the full-resolution pixels is made.
 * tests/bench/engine.ts compares it with a shrink-on-load decode and a point sample.
 */
export async function deriveReduced(full: ReducedPixels, longSide = ANALYSIS_SIDE): Promise<ReducedPixels> {
  // libvips takes raw 16-bit input as plain numbers, not as rgb16: narrow to 8 bits first
  const src = narrowTo8(full);
  if (Math.max(src.width, src.height) <= longSide) return { ...src, data: src === full ? src.data.slice() : src.data };
  const { data, info } = await rawImage(src)
    .resize({ width: longSide, height: longSide, fit: 'inside', kernel: 'linear' })
    .toColourspace('srgb')
    .raw({ depth: 'uchar' })
    .toBuffer({ resolveWithObject: true });
  return { data: new Uint8Array(data.buffer, data.byteOffset, data.length), width: info.width, height: info.height, channels: info.channels, depth: 8 };
}

/** Decodes a reduced copy and measures the print. @throws {ScanRejected} */
export async function analyseScan(input: string | Buffer, limits?: Partial<ScanLimits>): Promise<Analysis> {
  return analysePixels(await loadReduced(input, ANALYSIS_SIDE, limits));
}

/** EXIF tags worth carrying from a scan to its render: dates, device, author (EXIF 2.32), by the IFD sharp writes them to. */
const EXIF_KEEP = {
  IFD0: ['ImageDescription', 'Make', 'Model', 'DateTime', 'Artist', 'Copyright'],
  IFD2: ['DateTimeOriginal', 'DateTimeDigitized', 'OffsetTimeOriginal'],
} as const;

let exifReader: typeof ExifReaderModule | undefined;
/**
 * exifreader, loaded when the first scan with EXIF comes: its load takes about 45 ms here, a
 * fifth of a scan's render, which a command-line run over scans without EXIF need not pay.
 */
function exifReaderModule(): typeof ExifReaderModule {
  exifReader ??= createRequire(import.meta.url)('exifreader') as typeof ExifReaderModule;
  return exifReader;
}

/**
 * Reads the carried-over EXIF text tags from a raw EXIF block (as libvips hands it over, with or
 * without the "Exif\0\0" prefix) with exifreader. Orientation is deliberately not among them: the
 * render's pixels are already turned. A malformed block yields what could be read, or nothing.
 */
export function meaningfulExif(exif: Buffer | undefined): sharp.Exif {
  const out: sharp.Exif = {};
  if (!exif || exif.length < 8) return out;
  // the block is a TIFF structure after its prefix; exifreader takes it as a TIFF file
  const tiff = exif.toString('latin1', 0, 6) === 'Exif\0\0' ? exif.subarray(6) : exif;
  let tags: ExifReaderModule.Tags;
  try {
    tags = exifReaderModule().load(tiff);
  } catch {
    return out;
  }
  for (const ifd of ['IFD0', 'IFD2'] as const) {
    for (const name of EXIF_KEEP[ifd]) {
      const value = (tags[name] as { value?: unknown } | undefined)?.value;
      // ASCII tags come as one string in an array; anything else under that name is not carried
      const raw = Array.isArray(value) && typeof value[0] === 'string' ? value[0] : undefined;
      const text = raw?.replace(/\0+$/, '').trim();
      // libvips flattens non-ASCII and trims some punctuation: carry plain ASCII only (seen with sharp 0.34 here)
      if (text && /^[\x20-\x7e]+$/.test(text)) (out[ifd] ??= {})[name] = text;
    }
  }
  return out;
}

export interface RenderOptions {
  /** JPEG quality, default 92. */
  quality?: number;
  /**
   * Optimised Huffman tables: about 5 % smaller files for about twice the encode time
   * (tests/bench/engine.ts). Default false: batch speed matters more here than a few percent.
   */
  optimiseCoding?: boolean;
  /** Scale the render down to this long side (the full-resolution render when absent). */
  maxSide?: number;
  /**
   * Also make small JPEGs of the original and the corrected image from the same decode.
   * `correctedOnly` leaves out the original's (a re-render, whose original's copies exist);
   * `originalThumbnailOnly` makes only the thumbnail of the original (its preview is made on demand).
   */
  previews?: { thumbnail?: number; preview?: number; correctedOnly?: boolean; originalThumbnailOnly?: boolean };
  /**
   * Metadata written by the same encode, so an exported JPEG is one generation from the scan:
   * `exif` in place of the tags carried over from the scan, `xmp` a whole XMP packet.
   */
  metadata?: { exif?: sharp.Exif; xmp?: string };
}

export interface PreviewSet {
  thumbnail?: Buffer;
  preview?: Buffer;
}

export interface RenderResult {
  /** sRGB JPEG with an embedded sRGB profile. */
  buffer: Buffer;
  width: number;
  height: number;
  previews?: { original: PreviewSet; corrected: PreviewSet };
}

let srgbProfile: Promise<Buffer> | null = null;

/** libvips' own sRGB profile, fetched once from a 1x1 render. */
function srgbIcc(): Promise<Buffer> {
  srgbProfile ??= sharp({ create: { width: 1, height: 1, channels: 3, background: '#ffffff' } })
    .withIccProfile('srgb')
    .jpeg()
    .toBuffer()
    .then((b) => sharp(b).metadata())
    .then((m) => {
      if (!m.icc) throw new Error('libvips produced no sRGB profile');
      return m.icc;
    });
  return srgbProfile;
}

/**
 * Adds an ICC APP2 segment to a JPEG whose pixels are already sRGB. sharp's own options for this
 * (withIccProfile, withMetadata, which also brings the profile) run a colour transform over every
 * pixel, from sRGB to the same sRGB, for identical pixels: measured here on a 3600 x 2400 render
 * (sharp 0.34.5, one libvips thread, three passes on a loaded machine), the encode alone took
 * 65-107 ms, with withIccProfile('srgb') 205-389 ms, with withMetadata({ density }) 261-448 ms.
 * The segment is written here instead, which costs a copy of the JPEG.
 */
function embedIcc(jpeg: Buffer, icc: Buffer): Buffer {
  const head = Buffer.from('ICC_PROFILE\0', 'latin1');
  if (icc.length + head.length + 2 + 2 > 0xffff) throw new Error('ICC profile too large for one APP2 segment');
  const seg = Buffer.alloc(4 + head.length + 2 + icc.length);
  seg[0] = 0xff;
  seg[1] = 0xe2;
  seg.writeUInt16BE(seg.length - 2, 2);
  head.copy(seg, 4);
  seg[4 + head.length] = 1; // segment 1 of 1
  seg[5 + head.length] = 1;
  icc.copy(seg, 6 + head.length);
  // after SOI and the JFIF/EXIF segments, before the image data
  let at = 2;
  while (at + 4 <= jpeg.length && jpeg[at] === 0xff && (jpeg[at + 1] === 0xe0 || jpeg[at + 1] === 0xe1)) at += 2 + jpeg.readUInt16BE(at + 2);
  return Buffer.concat([jpeg.subarray(0, at), seg, jpeg.subarray(at)]);
}

/**
 * Records the scan's resolution in the JPEG: a JFIF APP0 segment in front, and the EXIF IFD0
 * resolution tags rewritten when libvips wrote them. libvips takes resolution from the image,
 * and pixels handed over raw have none; asking it to set one (withMetadata({ density })) brings
 * the needless colour transform measured at {@link embedIcc} along.
 */
function stampResolution(jpeg: Buffer, dpi: number): Buffer {
  const d = Math.max(1, Math.min(65535, Math.round(dpi)));
  let at = 2;
  while (at + 4 <= jpeg.length && jpeg[at] === 0xff && jpeg[at + 1] >= 0xe0 && jpeg[at + 1] <= 0xef) {
    const len = jpeg.readUInt16BE(at + 2);
    if (jpeg[at + 1] === 0xe1 && jpeg.toString('latin1', at + 4, at + 10) === 'Exif\0\0') patchExifResolution(jpeg, at + 10, at + 2 + len, d);
    at += 2 + len;
  }
  if (jpeg[2] === 0xff && jpeg[3] === 0xe0) return jpeg;
  const jfif = Buffer.from([0xff, 0xe0, 0x00, 0x10, 0x4a, 0x46, 0x49, 0x46, 0x00, 0x01, 0x02, 0x01, d >> 8, d & 0xff, d >> 8, d & 0xff, 0x00, 0x00]);
  return Buffer.concat([jpeg.subarray(0, 2), jfif, jpeg.subarray(2)]);
}

function patchExifResolution(buf: Buffer, tiff: number, end: number, dpi: number): void {
  const le = buf.toString('latin1', tiff, tiff + 2) === 'II';
  const u16 = (o: number) => (le ? buf.readUInt16LE(o) : buf.readUInt16BE(o));
  const u32 = (o: number) => (le ? buf.readUInt32LE(o) : buf.readUInt32BE(o));
  const w32 = (o: number, v: number) => (le ? buf.writeUInt32LE(v, o) : buf.writeUInt32BE(v, o));
  const w16 = (o: number, v: number) => (le ? buf.writeUInt16LE(v, o) : buf.writeUInt16BE(v, o));
  const ifd = tiff + u32(tiff + 4);
  if (ifd + 2 > end) return;
  const n = u16(ifd);
  for (let k = 0; k < n; k++) {
    const e = ifd + 2 + k * 12;
    if (e + 12 > end) return;
    const tag = u16(e);
    const type = u16(e + 2);
    if ((tag === 0x011a || tag === 0x011b) && type === 5) {
      const off = tiff + u32(e + 8);
      if (off + 8 <= end) {
        w32(off, dpi);
        w32(off + 4, 1);
      }
    } else if (tag === 0x0128 && type === 3) {
      w16(e + 8, 2); // inches
    }
  }
}

/** 8-bit pixels turned and cropped by the correction's geometry. */
function withGeometry(p: ReducedPixels, c: Correction): ReducedPixels {
  const g = applyGeometry(p.data as Uint8Array, p.width, p.height, p.channels, geometryPlan(c, p.width, p.height));
  return { ...p, data: g.data, width: g.width, height: g.height };
}

function rawImage(p: ReducedPixels): sharp.Sharp {
  const bytes = Buffer.from(p.data.buffer, p.data.byteOffset, p.data.byteLength);
  const raw = { width: p.width, height: p.height, channels: p.channels as 3 | 4 };
  return p.depth === 16 ? sharp(bytes, { raw: { ...raw, depth: 'ushort' as const } } as sharp.SharpOptions) : sharp(bytes, { raw });
}

function narrowTo8(p: ReducedPixels): ReducedPixels {
  if (p.depth === 8) return p;
  const narrow = new Uint8Array(p.data.length);
  for (let i = 0; i < narrow.length; i++) narrow[i] = p.data[i] >> 8;
  return { ...p, data: narrow, depth: 8 };
}

/**
 * Encodes an 8-bit raw copy as a small JPEG, reduced further to `side` when it is larger.
 * Standard Huffman tables: optimised ones take about twice the encode time for a few percent.
 */
function smallJpeg(p: ReducedPixels, side: number): Promise<Buffer> {
  const img = Math.max(p.width, p.height) > side ? rawImage(p).resize({ width: side, height: side, fit: 'inside', kernel: 'linear' }) : rawImage(p);
  return img.toColourspace('srgb').jpeg({ quality: 82, optimiseCoding: false }).toBuffer();
}

/** Long side of the largest small copy asked for, or 0 for none. */
function smallSide(sizes: RenderOptions['previews']): number {
  return Math.max(sizes?.preview ?? 0, sizes?.thumbnail ?? 0);
}

async function previewSet(small: ReducedPixels, sizes: RenderOptions['previews']): Promise<PreviewSet> {
  const [preview, thumbnail] = await Promise.all([sizes?.preview ? smallJpeg(small, sizes.preview) : undefined, sizes?.thumbnail ? smallJpeg(small, sizes.thumbnail) : undefined]);
  const out: PreviewSet = {};
  if (preview) out.preview = preview;
  if (thumbnail) out.thumbnail = thumbnail;
  return out;
}

/**
 * The small JPEGs of the original and of its correction, from one 8-bit small copy. The corrected
 * copy is the correction applied to the small original, as the review page's live preview does:
 * a millisecond, where a reduction of the full corrected pixels costs as much as the first.
 * `luts` are the correction's 8-bit tables when the caller has built them already.
 */
async function smallCopies(reduced: ReducedPixels, c: Correction, sizes: RenderOptions['previews'], luts?: ReturnType<typeof buildChannelLuts>): Promise<{ original: PreviewSet; corrected: PreviewSet }> {
  const smallLuts = isIdentity(c) ? undefined : (luts ?? buildChannelLuts(c, 8, 8));
  const coloured: ReducedPixels = smallLuts ? { ...reduced, data: applyCorrection(reduced.data, reduced.channels, smallLuts) as Uint8Array, depth: 8 } : reduced;
  const turned = hasGeometry(c);
  const correctedSmall: ReducedPixels = turned ? withGeometry(coloured, c) : coloured;
  const changed = Boolean(smallLuts) || turned;
  const wantOriginal = !sizes?.correctedOnly;
  // an unfaded print's corrected copies are the original's: then both of the original's are made
  const originalSizes = sizes?.originalThumbnailOnly && changed ? { thumbnail: sizes.thumbnail } : sizes;
  const [original, correctedSet] = await Promise.all([wantOriginal || !changed ? previewSet(reduced, originalSizes) : {}, changed ? previewSet(correctedSmall, sizes) : undefined]);
  return { original: wantOriginal ? original : {}, corrected: correctedSet ?? original };
}

/**
 * Renders from decoded pixels. `small`, when previews are asked for, is the 8-bit small copy
 * made by {@link deriveReduced} (the analysis copy, when the caller measured the print first);
 * it is made here otherwise. Every preview and thumbnail comes from it.
 */
async function renderFromFull(full: FullPixels, correction: Correction, options: RenderOptions, small?: ReducedPixels): Promise<RenderResult> {
  const c = correctionSchema.parse(correction);
  let src: ReducedPixels = full;
  if (options.maxSide && Math.max(full.width, full.height) > options.maxSide) {
    const { data, info } = await rawImage(full)
      .resize({ width: options.maxSide, height: options.maxSide, fit: 'inside' })
      .raw({ depth: full.depth === 16 ? 'ushort' : 'uchar' })
      .toBuffer({ resolveWithObject: true });
    src = { data: full.depth === 16 ? new Uint16Array(data.buffer.slice(data.byteOffset, data.byteOffset + data.length)) : new Uint8Array(data.buffer, data.byteOffset, data.length), width: info.width, height: info.height, channels: info.channels, depth: full.depth };
    small = undefined;
  }
  // previews are never larger than the copy the review analysis makes of the same scan
  const side = Math.min(smallSide(options.previews), reviewCopySide(Math.max(src.width, src.height), full.probe.format));
  // the small copy of the original must be taken before the full pixels are corrected in place
  const reduced = side > 0 ? (small ?? (await deriveReduced(src, side))) : undefined;
  // an unfaded print on 8-bit pixels needs no per-pixel pass at all
  const untouched = isIdentity(c) && src.depth === 8;
  const luts = untouched ? undefined : buildChannelLuts(c, src.depth, 8);
  // 8-bit pixels are corrected in place; 16-bit ones go to a new 8-bit buffer
  const inPlace = src.depth === 8 ? (src.data as Uint8Array) : undefined;
  const data = luts ? (applyCorrection(src.data, src.channels, luts, inPlace) as Uint8Array) : (src.data as Uint8Array);
  const coloured: ReducedPixels = { data, width: src.width, height: src.height, channels: src.channels, depth: 8 };
  // turns and crop after the colour, by the same pixel copy the browser's preview makes
  const corrected = hasGeometry(c) ? withGeometry(coloured, c) : coloured;
  let out = rawImage(corrected);
  const exif = options.metadata?.exif ?? meaningfulExif(full.probe.exif);
  if (Object.keys(exif).length > 0) out = out.withExif(exif);
  if (options.metadata?.xmp) out = out.withXmp(options.metadata.xmp);
  const encoding = Promise.all([out.jpeg({ quality: options.quality ?? 92, optimiseCoding: options.optimiseCoding ?? false }).toBuffer(), srgbIcc()]);
  const previews = reduced ? await smallCopies(reduced, c, options.previews, luts && src.depth === 8 ? luts : undefined) : undefined;
  const [encoded, icc] = await encoding;
  const withIcc = embedIcc(encoded, icc);
  const buffer = full.probe.density ? stampResolution(withIcc, full.probe.density) : withIcc;
  const result: RenderResult = { buffer, width: corrected.width, height: corrected.height };
  if (previews) result.previews = previews;
  return result;
}

function readRefusal(err: unknown): ScanRejected {
  return new ScanRejected('unreadable', `The file could not be read: ${(err as NodeJS.ErrnoException).code ?? 'error'}.`, { cause: err });
}

async function asBuffer(input: string | Buffer): Promise<Buffer> {
  if (Buffer.isBuffer(input)) return input;
  try {
    return await readFile(input);
  } catch (err) {
    throw readRefusal(err);
  }
}

/**
 * Reads a whole scan at once, blocking, for a command line: a scan of a few MB comes from the page
 * cache in well under a millisecond, where an asynchronous read waits its turn on libuv's threads
 * behind the decodes and encodes of other scans. A failed read is refused as {@link asBuffer} does.
 * @throws {ScanRejected}
 */
export function readScanSync(path: string): Buffer {
  try {
    return readFileSync(path);
  } catch (err) {
    throw readRefusal(err);
  }
}

/**
 * Renders a correction at full resolution (same pixel size as the oriented original), as an
 * sRGB JPEG with the sRGB profile embedded and the original's meaningful EXIF carried over.
 * @throws {ScanRejected}
 */
export async function renderCorrected(input: string | Buffer, correction: Correction, options: RenderOptions = {}, limits?: Partial<ScanLimits>): Promise<RenderResult> {
  const file = await asBuffer(input);
  const full = await loadFull(file, limits, await probeScan(file, limits));
  return renderFromFull(full, correction, options);
}

export interface AnalyseAndRenderOptions extends RenderOptions {
  /** 0..1, applied to the proposed correction. Default 1. */
  strength?: number;
  /** Use this correction instead of the proposed one (e.g. pooled across a batch). */
  correction?: Correction;
  /** Long side of the analysis copy, default {@link reviewCopySide} of the scan. */
  analysisSide?: number;
  limits?: Partial<ScanLimits>;
  /**
   * Runs the full decode. A batch with several scans in flight passes a limit here (p-limit), so
   * that no more decode at once than there are cores and their decodes end one after another
   * rather than together, each scan then finding this thread free for its measuring
   * (src/scripts/correct.ts).
   */
  decodeSlot?: <T>(decode: () => Promise<T>) => Promise<T>;
}

export interface AnalyseAndRenderResult extends RenderResult {
  probe: ScanProbe;
  analysis: Analysis;
  /** The correction that was rendered. */
  correction: Correction;
}

/**
 * Decodes a scan once, measures it on the small copy of the decoded pixels, renders the
 * correction and, when asked, the previews from that same small copy: the path the command line
 * and the job worker take. The full-resolution pixels are decoded once, read once for the small
 * copy, corrected in place and encoded.
 * @throws {ScanRejected}
 */
export async function analyseAndRender(input: string | Buffer, options: AnalyseAndRenderOptions = {}): Promise<AnalyseAndRenderResult> {
  const file = await asBuffer(input);
  const probe = await probeScan(file, options.limits);
  const decode = () => loadFull(file, options.limits, probe);
  const full = await (options.decodeSlot ? options.decodeSlot(decode) : decode());
  // What waits for this thread goes first (another scan's decode or encode to hand to libvips)
  // before this scan's measuring and correcting hold it for some 30 ms.
  await new Promise<void>((resolve) => setImmediate(resolve));
  // the same size of copy as the analyse job measures (reviewCopySide), so both propose alike
  const analysisSide = options.analysisSide ?? reviewCopySide(Math.max(probe.width, probe.height), probe.format);
  const previewSide = options.maxSide ? 0 : smallSide(options.previews);
  // With previews, one filtered small copy serves the analysis and the previews. Without, the
  // analysis measures a point sample of the decode, which costs a third as much; its histograms
  // and medians do not need the averaging a preview shown to people does.
  const small = previewSide > 0 ? await deriveReduced(full, Math.max(analysisSide, previewSide)) : undefined;
  const measured = small && Math.max(small.width, small.height) <= analysisSide ? small : samplePixels(small ?? full, analysisSide);
  const analysis = analysePixels(measured);
  const base = options.correction ?? analysis.proposed;
  // the option scales the proposal's own strength, which already follows the evidence of ageing
  const correction = { ...base, strength: Math.round(base.strength * (options.strength ?? 1) * 1e4) / 1e4 };
  const render = await renderFromFull(full, correction, options, small);
  return { ...render, probe, analysis, correction };
}

export interface ReviewCopiesOptions {
  /** Long sides of the small JPEGs at most; the preview is the analysis copy itself when that is smaller ({@link reviewCopySide}). */
  previews: { preview?: number; thumbnail?: number; originalThumbnailOnly?: boolean };
  limits?: Partial<ScanLimits>;
}

export interface ReviewCopiesResult {
  probe: ScanProbe;
  analysis: Analysis;
  /** The proposed correction, which the corrected small copies show. */
  correction: Correction;
  previews: { original: PreviewSet; corrected: PreviewSet };
  /** Whether the scan looks like the back of a print (src/lib/backs/paper-back.ts); a back's original preview is always made. */
  back: BackMeasure;
  /**
   * The picture fingerprint of the same copy (src/lib/images/fingerprint.ts), to find other scans
   * of the picture; null for a scan too small to give one.
   */
  fingerprint: string | null;
}

/**
 * Everything a print needs to be reviewed, without its full-resolution render: the analysis and
 * proposal measured on the review copy ({@link reviewCopySide}: a JPEG of 1800 px or more is decoded
 * at 1/2, 1/4 or 1/8 scale, a smaller one or another format whole and reduced), and the small JPEGs
 * of the original and of the proposed correction from that same
 * copy. The review compares these and, at 1:1, regions of the original corrected in the browser;
 * the full-resolution corrected JPEG is {@link renderCorrected}'s work, made afterwards.
 * @throws {ScanRejected}
 */
export async function analyseForReview(input: string | Buffer, options: ReviewCopiesOptions): Promise<ReviewCopiesResult> {
  const file = await asBuffer(input);
  const probe = await probeScan(file, options.limits);
  const side = reviewCopySide(Math.max(probe.width, probe.height), probe.format);
  // a linear filter for what the decoder's own shrink leaves, as deriveReduced uses for the same copy
  const small = await decodeReduced(file, probe, side, 'linear');
  const analysis = analysePixels(small);
  const correction = analysis.proposed;
  // about 100 000 pixels measured: the verdict does not change with sampling (tests/unit/backs)
  const back = measureBack(small.data as Uint8Array, small.width, small.height, small.channels, Math.max(1, Math.floor((small.width * small.height) / 100_000)));
  const previews = await smallCopies(small, correction, back.back ? { ...options.previews, originalThumbnailOnly: false } : options.previews);
  return { probe, analysis, correction, previews, back, fingerprint: fingerprintOf(small) };
}

/**
 * The picture fingerprint alone, from the same reduced copy {@link analyseForReview} measures (so it
 * equals the one the analysis stores): for prints analysed before fingerprints were kept.
 * @throws {ScanRejected}
 */
export async function fingerprintScan(input: string | Buffer, limits?: Partial<ScanLimits>): Promise<string | null> {
  const file = await asBuffer(input);
  const probe = await probeScan(file, limits);
  const side = reviewCopySide(Math.max(probe.width, probe.height), probe.format);
  return fingerprintOf(await decodeReduced(file, probe, side, 'linear'));
}

/** The fingerprint of a reduced copy, or null when the scan is too small to make one. */
function fingerprintOf(small: ReducedPixels): string | null {
  try {
    return fingerprint(small);
  } catch (err) {
    if (err instanceof RangeError) return null;
    throw err;
  }
}

/**
 * Sets libvips up for a process or thread that works through many scans (the job worker, its
 * engine threads, an export, the command line): no operation cache (each scan is seen once, and
 * a cache only holds its memory), and, when given, that many libvips threads per image.
 */
export function imagingForLongRuns(libvipsThreads?: number): void {
  sharp.cache(false);
  if (libvipsThreads) sharp.concurrency(libvipsThreads);
}

export interface EncodeOptions {
  format: ScanFormat;
  /** JPEG quality, default 92. */
  quality?: number;
  /** 16 bits per channel (PNG and TIFF only). */
  sixteenBit?: boolean;
  progressive?: boolean;
  /** Write a one-channel greyscale file (for a monochrome scene, as a black-and-white scanner mode would). */
  greyscale?: boolean;
}

/** Writes interleaved 8-bit RGB pixels as a JPEG, PNG or TIFF file, as a scanner would (the demo's and the tests' scans). */
export async function encodePixels(pixels: { data: Uint8Array; width: number; height: number }, options: EncodeOptions): Promise<Buffer> {
  let img = sharp(Buffer.from(pixels.data.buffer, pixels.data.byteOffset, pixels.data.byteLength), {
    raw: { width: pixels.width, height: pixels.height, channels: 3 },
  });
  if (options.greyscale) img = img.toColourspace(options.sixteenBit && options.format !== 'jpeg' ? 'grey16' : 'b-w');
  else if (options.sixteenBit && options.format !== 'jpeg') img = img.toColourspace('rgb16');
  if (options.format === 'jpeg') return img.jpeg({ quality: options.quality ?? 92, progressive: options.progressive ?? false }).toBuffer();
  if (options.format === 'png') return img.png({ compressionLevel: 3 }).toBuffer();
  return img.tiff({ compression: 'lzw' }).toBuffer();
}

/** A rectangle of the upright scan, in its full-resolution pixels. */
export interface ScanRegion {
  x: number;
  y: number;
  w: number;
  h: number;
}

export interface CropOptions {
  /** Part of the upright scan; the whole scan when absent. */
  region?: ScanRegion;
  /** Reduce to this long side at most. */
  max?: number;
  /**
   * Apply this correction's tables; for the whole scan also its turns and crop, as its render
   * is framed (a region stays in the upright scan's pixels).
   */
  correction?: Correction | null;
  /** JPEG quality, default 90. */
  quality?: number;
}

/**
 * A JPEG of part of a probed scan at full resolution (the review's 1:1 view), or of the whole
 * scan reduced: of the original, or with a correction applied by the engine's tables. A region
 * of a JPEG is decoded only down to its bottom row (libvips reads the file in order and stops
 * there); a reduced JPEG uses the decoder's own shrink where the size allows.
 * @throws {ScanRejected}
 */
export async function cropScan(input: string | Buffer, probe: ScanProbe, options: CropOptions = {}): Promise<Buffer> {
  const r = options.region;
  const whole = !r || (r.x === 0 && r.y === 0 && r.w === probe.width && r.h === probe.height);
  const quality = options.quality ?? 90;
  try {
    let img = sharp(input, { limitInputPixels: probe.storedWidth * probe.storedHeight, failOn: 'truncated' }).rotate();
    if (probe.hasAlpha) img = img.flatten({ background: '#ffffff' });
    if (!whole) img = img.extract({ left: r.x, top: r.y, width: r.w, height: r.h });
    if (options.max) img = img.resize({ width: options.max, height: options.max, fit: 'inside', withoutEnlargement: true });
    img = img.toColourspace('srgb');
    const c = options.correction;
    if (!c) return await img.jpeg({ quality }).toBuffer();
    const { data, info } = await img.removeAlpha().raw().toBuffer({ resolveWithObject: true });
    const coloured: ReducedPixels = { data: applyCorrection(new Uint8Array(data.buffer, data.byteOffset, data.length), info.channels, buildChannelLuts(c, 8, 8)) as Uint8Array, width: info.width, height: info.height, channels: info.channels, depth: 8 };
    const framed = whole && hasGeometry(c) ? withGeometry(coloured, c) : coloured;
    return await rawImage(framed).jpeg({ quality }).toBuffer();
  } catch (err) {
    throw decodeError(err);
  }
}
