/**
 * Bad and unusual input: every case gives a correct result or a ScanRejected with a plain
 * message, never a crash or a hang. Images are built here with sharp from invented pixels.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import ExifReader from 'exifreader';
import { ScanRejected, analyseAndRender, loadReduced, meaningfulExif, probeScan, renderCorrected } from '../../../src/lib/restoration/imaging';
import { identityCorrection } from '../../../src/lib/restoration/correction';
import { encodeScene, generateScene } from '../../../src/lib/demo/synthetic';
import { pngWith } from '../../support/bad-corpus.ts';
import { exiftool, runTool } from '../../support/outside-checks.ts';

const dir = mkdtempSync(join(tmpdir(), 'drawerlight-imaging-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function rejection(p: Promise<unknown>): Promise<ScanRejected> {
  try {
    await p;
  } catch (err) {
    expect(err).toBeInstanceOf(ScanRejected);
    expect((err as ScanRejected).message.length).toBeGreaterThan(10);
    return err as ScanRejected;
  }
  throw new Error('expected a ScanRejected');
}

/** CRC-32 as PNG defines it (ISO/IEC 15948 annex D). */
/** A PNG whose IHDR claims 50 000 x 50 000 RGB pixels, with a token IDAT: a decompression bomb's header. */
function bombPng(): Buffer {
  return pngWith(50000, 50000, 8, 2, Buffer.from([0x78, 0x9c, 0x03, 0x00, 0x00, 0x00, 0x00, 0x01]));
}

/** 60 x 40 upright test card: red, green / blue, white quadrants. */
const CARD_W = 60;
const CARD_H = 40;
const QUADS = [[220, 30, 30], [30, 200, 40], [30, 40, 210], [245, 245, 245]];
function card(): Uint8Array {
  const d = new Uint8Array(CARD_W * CARD_H * 3);
  for (let y = 0; y < CARD_H; y++)
    for (let x = 0; x < CARD_W; x++) d.set(QUADS[(y < CARD_H / 2 ? 0 : 2) + (x < CARD_W / 2 ? 0 : 1)], (y * CARD_W + x) * 3);
  return d;
}

/**
 * Stored pixels for EXIF orientation o such that a viewer applying o shows the upright card
 * (EXIF 2.32, tag 0x0112: where row 0 and column 0 of the stored image go).
 */
function storedFor(o: number): { data: Uint8Array; width: number; height: number } {
  const up = card();
  const swap = o >= 5;
  const ws = swap ? CARD_H : CARD_W;
  const hs = swap ? CARD_W : CARD_H;
  const out = new Uint8Array(up.length);
  for (let y = 0; y < CARD_H; y++) {
    for (let x = 0; x < CARD_W; x++) {
      const [sx, sy] = (
        {
          1: [x, y],
          2: [CARD_W - 1 - x, y],
          3: [CARD_W - 1 - x, CARD_H - 1 - y],
          4: [x, CARD_H - 1 - y],
          5: [y, x],
          6: [y, hs - 1 - x],
          7: [ws - 1 - y, hs - 1 - x],
          8: [ws - 1 - y, x],
        } as Record<number, [number, number]>
      )[o];
      out.set(up.subarray((y * CARD_W + x) * 3, (y * CARD_W + x) * 3 + 3), (sy * ws + sx) * 3);
    }
  }
  return { data: out, width: ws, height: hs };
}

async function quadrantMeans(jpeg: Buffer): Promise<number[][]> {
  const { data, info } = await sharp(jpeg).raw().toBuffer({ resolveWithObject: true });
  return [0, 1, 2, 3].map((q) => {
    const x = q % 2 === 0 ? info.width / 4 : (3 * info.width) / 4;
    const y = q < 2 ? info.height / 4 : (3 * info.height) / 4;
    const i = (Math.floor(y) * info.width + Math.floor(x)) * info.channels;
    return [data[i], data[i + 1], data[i + 2]];
  });
}

describe('refusals', () => {
  it('refuses an empty file', async () => {
    expect((await rejection(probeScan(Buffer.alloc(0)))).code).toBe('empty');
    const p = join(dir, 'empty.jpg');
    writeFileSync(p, '');
    expect((await rejection(analyseAndRender(p))).code).toBe('empty');
  });

  it('refuses a text file named .jpg by its content, not its name', async () => {
    const p = join(dir, 'notes.jpg');
    writeFileSync(p, 'Box 3, drawer 2: summer 1981, Aunt May at the lake.\n');
    const err = await rejection(analyseAndRender(p));
    expect(err.code).toBe('unsupported_type');
    expect(err.message).toMatch(/text/);
  });

  it('refuses an SVG with a script as a type, and HTML too, without rendering them', async () => {
    const svg = Buffer.from('<?xml version="1.0"?><svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"><script>alert(1)</script><rect width="10" height="10"/></svg>');
    const err = await rejection(analyseAndRender(svg));
    expect(err.code).toBe('unsupported_type');
    expect(err.message).toMatch(/SVG/);
    expect((await rejection(probeScan(Buffer.from('<!DOCTYPE html><html><body>hi</body></html>')))).code).toBe('unsupported_type');
  });

  it('refuses a header claiming 50 000 x 50 000 pixels before decoding anything', async () => {
    // its pixel data is an empty stream: any decode would end as `unreadable`, so this code shows
    // that the header alone was read
    const err = await rejection(analyseAndRender(bombPng()));
    expect(err.code).toBe('too_many_pixels');
    expect(err.status).toBe(413);
    expect(err.message).toMatch(/50000 x 50000/);
  });

  it('refuses a file over the byte limit', async () => {
    const jpeg = await encodeScene(generateScene({ width: 60, height: 40 }), { format: 'jpeg' });
    expect((await rejection(probeScan(jpeg, { maxBytes: 100 }))).code).toBe('too_large');
  });

  it('refuses a truncated JPEG as cut short', async () => {
    const jpeg = await encodeScene(generateScene({ width: 300, height: 200 }), { format: 'jpeg' });
    const err = await rejection(analyseAndRender(jpeg.subarray(0, Math.floor(jpeg.length / 2))));
    expect(err.code).toBe('unreadable');
    expect(err.message).toBe('The image is cut short (the file is incomplete or was not fully copied).');
  });

  it('refuses a whole JPEG with corrupt entropy data as damaged, not as cut short', async () => {
    // A quarter of the compressed scan data taken out of the middle of a file that still ends with
    // its end-of-image marker: libjpeg warns "Corrupt JPEG data: premature end of data segment",
    // whose "premature" must not make it read as a file cut short.
    const jpeg = await encodeScene(generateScene({ width: 600, height: 400 }), { format: 'jpeg' });
    const sos = jpeg.indexOf(Buffer.from([0xff, 0xda]));
    const dataStart = sos + 2 + jpeg.readUInt16BE(sos + 2);
    const from = dataStart + Math.floor((jpeg.length - dataStart) / 3);
    const corrupt = Buffer.concat([jpeg.subarray(0, from), jpeg.subarray(from + Math.floor((jpeg.length - dataStart) / 4))]);
    expect(corrupt.subarray(-2)).toEqual(Buffer.from([0xff, 0xd9]));
    const err = await rejection(analyseAndRender(corrupt));
    expect(err.code).toBe('unreadable');
    expect(err.message).toBe('The image data is damaged and cannot be decoded.');
    expect(String((err.cause as Error)?.message)).toMatch(/Corrupt JPEG data/);
  });

  it('refuses a missing file as unreadable', async () => {
    expect((await rejection(probeScan(join(dir, 'nope.jpg')))).code).toBe('unreadable');
  });
});

describe('unusual but valid scans', () => {
  it('takes a 1x1 image', async () => {
    const one = await sharp({ create: { width: 1, height: 1, channels: 3, background: { r: 200, g: 180, b: 150 } } }).png().toBuffer();
    const r = await analyseAndRender(one);
    expect([r.width, r.height]).toEqual([1, 1]);
  });

  it.each([1, 2, 3, 4, 5, 6, 7, 8])('applies EXIF orientation %i: upright size and content', async (o) => {
    const s = storedFor(o);
    const jpeg = await sharp(Buffer.from(s.data), { raw: { width: s.width, height: s.height, channels: 3 } }).withMetadata({ orientation: o }).jpeg({ quality: 95 }).toBuffer();
    const probe = await probeScan(jpeg);
    expect([probe.width, probe.height]).toEqual([CARD_W, CARD_H]);
    const r = await renderCorrected(jpeg, identityCorrection());
    expect([r.width, r.height]).toEqual([CARD_W, CARD_H]);
    const means = await quadrantMeans(r.buffer);
    means.forEach((m, q) => m.forEach((v, c) => expect(Math.abs(v - QUADS[q][c]), `quadrant ${q}`).toBeLessThan(20)));
    const tags = ExifReader.load(r.buffer);
    expect(tags.Orientation?.value ?? 1).toBe(1);
  });

  it('converts a CMYK JPEG to sRGB', async () => {
    const cmyk = await sharp(Buffer.from(card()), { raw: { width: CARD_W, height: CARD_H, channels: 3 } }).toColourspace('cmyk').jpeg().toBuffer();
    expect((await probeScan(cmyk)).space).toBe('cmyk');
    const r = await renderCorrected(cmyk, identityCorrection());
    const meta = await sharp(r.buffer).metadata();
    expect([meta.space, meta.channels]).toEqual(['srgb', 3]);
    const means = await quadrantMeans(r.buffer);
    // red stays red-dominant, blue stays blue-dominant after the CMYK round trip
    expect(means[0][0]).toBeGreaterThan(means[0][2] + 80);
    expect(means[2][2]).toBeGreaterThan(means[2][0] + 80);
  });

  it('reads a 16-bit TIFF and renders it to an 8-bit JPEG', async () => {
    const tiff = await encodeScene(generateScene({ width: 300, height: 200, border: true }), { format: 'tiff', sixteenBit: true });
    expect((await probeScan(tiff)).bitsPerChannel).toBe(16);
    const r = await analyseAndRender(tiff, { previews: { thumbnail: 64 } });
    expect(r.analysis.fadeGrade).toBe('none');
    // the thumbnail of a 16-bit scan keeps its tones (a wrong cast would clip it to white)
    const stats = await sharp(r.previews!.original.thumbnail!).stats();
    expect(stats.channels[0].mean).toBeLessThan(200);
    expect(r.analysis.paperBase.method).toBe('border');
    expect([r.width, r.height]).toEqual([300, 200]);
  });

  it('expands a greyscale PNG to RGB', async () => {
    const grey = await sharp(Buffer.from(card()), { raw: { width: CARD_W, height: CARD_H, channels: 3 } }).toColourspace('b-w').png().toBuffer();
    expect((await loadReduced(grey)).channels).toBe(3);
    const r = await analyseAndRender(grey);
    expect((await sharp(r.buffer).metadata()).channels).toBe(3);
  });

  it('takes a 16-bit greyscale PNG of a black-and-white print and leaves it neutral', async () => {
    const png = await encodeScene(generateScene({ width: 300, height: 200, monochrome: true, border: true }), { format: 'png', greyscale: true, sixteenBit: true });
    expect((await probeScan(png)).bitsPerChannel).toBe(16);
    const r = await analyseAndRender(png);
    expect(r.analysis.fadeGrade).toBe('none');
    const stats = await sharp(r.buffer).stats();
    expect(stats.channels).toHaveLength(3);
    expect(Math.abs(stats.channels[0].mean - stats.channels[2].mean)).toBeLessThan(1);
  });

  it('flattens a PNG with alpha on white paper', async () => {
    const rgba = new Uint8Array(CARD_W * CARD_H * 4);
    for (let i = 0; i < rgba.length; i += 4) rgba.set([20, 20, 20, i < rgba.length / 2 ? 255 : 0], i);
    const png = await sharp(Buffer.from(rgba), { raw: { width: CARD_W, height: CARD_H, channels: 4 } }).png().toBuffer();
    expect((await probeScan(png)).hasAlpha).toBe(true);
    const r = await renderCorrected(png, identityCorrection());
    const means = await quadrantMeans(r.buffer);
    expect(means[0][0]).toBeLessThan(40);
    expect(means[3][0]).toBeGreaterThan(240);
  });

  it('reads a progressive JPEG', async () => {
    const jpeg = await encodeScene(generateScene({ width: 300, height: 200 }), { format: 'jpeg', progressive: true });
    const r = await analyseAndRender(jpeg);
    expect([r.width, r.height]).toEqual([300, 200]);
  });
});

describe('render output', () => {
  it('is an sRGB JPEG with the profile embedded and the meaningful EXIF carried over', async () => {
    const src = await sharp(Buffer.from(card()), { raw: { width: CARD_W, height: CARD_H, channels: 3 } })
      .withExif({ IFD0: { Make: 'Acme', Model: 'Sheetfeeder 9', Software: 'scan tool' }, IFD2: { DateTimeOriginal: '1981:07:15 12:00:00' } })
      .withMetadata({ density: 600, orientation: 1 })
      .jpeg()
      .toBuffer();
    const r = await analyseAndRender(src, { previews: { thumbnail: 32, preview: 48 } });
    const meta = await sharp(r.buffer).metadata();
    expect(meta.format).toBe('jpeg');
    expect(meta.icc).toBeDefined();
    expect(meta.density).toBe(600);
    const tags = ExifReader.load(r.buffer);
    expect(tags.Make?.description).toBe('Acme');
    expect(tags.Model?.description).toBe('Sheetfeeder 9');
    expect(tags.DateTimeOriginal?.description).toBe('1981:07:15 12:00:00');
    expect(String(tags['ICC Description']?.description ?? tags['Profile Description']?.description ?? '')).toMatch(/sRGB/i);
    const thumb = await sharp(r.previews!.corrected.thumbnail!).metadata();
    expect(Math.max(thumb.width!, thumb.height!)).toBe(32);
    expect(r.previews!.original.preview).toBeInstanceOf(Buffer);
  });

  it('reads the dates and orientation ExifTool wrote, in either byte order, and carries the dates', async () => {
    // ExifTool (Debian's libimage-exiftool-perl) writes the EXIF here: another implementation than
    // the reader under test (exifreader) and the writer that makes the render (libvips)
    for (const order of ['Big-endian', 'Little-endian']) {
      const file = join(dir, `exiftool-${order}.jpg`);
      writeFileSync(file, await sharp(Buffer.from(card()), { raw: { width: CARD_W, height: CARD_H, channels: 3 } }).jpeg().toBuffer());
      const wrote = await runTool('exiftool', ['-overwrite_original', `-ExifByteOrder=${order}`, '-IFD0:Make=Acme', '-IFD0:DateTime=2024:03:02 10:11:12', '-ExifIFD:DateTimeOriginal=1981:07:15 12:00:00', '-ExifIFD:DateTimeDigitized=2024:03:02 10:11:12', '-ExifIFD:OffsetTimeOriginal=+01:00', '-IFD0:Orientation#=6', file]);
      expect(wrote.code, wrote.out).toBe(0);
      const truth = await exiftool(file);
      const probe = await probeScan(file);
      expect(probe.orientation).toBe(truth['IFD0:Orientation']);
      expect(probe.orientation).toBe(6);
      expect(meaningfulExif(probe.exif)).toEqual({
        IFD0: { Make: truth['IFD0:Make'], DateTime: truth['IFD0:DateTime'] },
        IFD2: { DateTimeOriginal: truth['ExifIFD:DateTimeOriginal'], DateTimeDigitized: truth['ExifIFD:DateTimeDigitized'], OffsetTimeOriginal: truth['ExifIFD:OffsetTimeOriginal'] },
      });
      // the render is upright, so it says so, and keeps the dates
      const r = await renderCorrected(file, identityCorrection());
      const out = join(dir, `render-${order}.jpg`);
      writeFileSync(out, r.buffer);
      const rendered = await exiftool(out);
      expect(rendered['IFD0:Orientation'] ?? 1).toBe(1);
      expect(rendered['ExifIFD:DateTimeOriginal']).toBe('1981:07:15 12:00:00');
    }
  });

  it('embeds the sRGB profile and the scan resolution as ExifTool reads them', async () => {
    const src = await sharp(Buffer.from(card()), { raw: { width: CARD_W, height: CARD_H, channels: 3 } }).withMetadata({ density: 600 }).jpeg().toBuffer();
    const r = await renderCorrected(src, identityCorrection());
    const out = join(dir, 'render-icc.jpg');
    writeFileSync(out, r.buffer);
    const tags = await exiftool(out);
    // ICC.1:2010 'desc' tag of libvips' built-in sRGB profile; JFIF 1.02 density in dots per inch (unit 1)
    expect(tags['ICC_Profile:ProfileDescription']).toBe('sRGB');
    expect([tags['JFIF:XResolution'], tags['JFIF:YResolution'], tags['JFIF:ResolutionUnit']]).toEqual([600, 600, 1]);
    expect(tags['ExifTool:Warning']).toBeUndefined();
  });

  it('reads nothing, and does not throw, from a damaged EXIF block', () => {
    expect(meaningfulExif(Buffer.from('Exif\0\0II*\0\xff\xff\xff\x7f', 'latin1'))).toEqual({});
    expect(meaningfulExif(Buffer.from('Exif\0\0MM\0*\0\0\0\x08\x7f\x7f', 'latin1'))).toEqual({});
    expect(meaningfulExif(undefined)).toEqual({});
  });

  it('can render a 16-bit scan smaller than full size', async () => {
    const tiff = await encodeScene(generateScene({ width: 300, height: 200 }), { format: 'tiff', sixteenBit: true });
    const r = await renderCorrected(tiff, identityCorrection(), { maxSide: 150 });
    expect([r.width, r.height]).toEqual([150, 100]);
    expect((await sharp(r.buffer).stats()).channels[1].mean).toBeLessThan(200);
  });

  it('can render smaller than full size', async () => {
    const jpeg = await encodeScene(generateScene({ width: 600, height: 400 }), { format: 'jpeg' });
    const r = await renderCorrected(jpeg, identityCorrection(), { maxSide: 300 });
    expect([r.width, r.height]).toEqual([300, 200]);
  });
});
