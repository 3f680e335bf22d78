import { execFile } from 'node:child_process';
import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import ExifReader from 'exifreader';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import yauzl from 'yauzl';
import sharp from 'sharp';
import { Correction, Item, Original, closeDb } from '../../../db/index.ts';
import { correctionSchema } from '../../../src/lib/restoration/correction.ts';
import { renderCorrected } from '../../../src/lib/restoration/imaging.ts';
import { storage } from '../../../src/lib/server/storage.ts';
import { listOutbox } from '../../../src/lib/server/outbox.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { exiftool, sha256sumCheck, unpackWithUnzip } from '../../support/outside-checks.ts';
import { batchWithPrints, decide, downloadBytes, sha256, waitExport } from './helpers.ts';

const run = promisify(execFile);
let a: TestArchive;
let other: TestArchive;
let itemIds: string[];
let batchId: string;
let zipBytes: Buffer;
let files: Map<string, Buffer>;
let base: string;
let tmp: string;

/** Every entry of a zip, read with yauzl (independent of the writer). */
function unzip(buf: Buffer): Promise<Map<string, Buffer>> {
  return new Promise((resolve, reject) => {
    yauzl.fromBuffer(buf, { lazyEntries: true }, (err, zip) => {
      if (err || !zip) return reject(err);
      const out = new Map<string, Buffer>();
      zip.on('entry', (e: yauzl.Entry) => {
        if (e.fileName.endsWith('/')) return zip.readEntry();
        zip.openReadStream(e, (err2, s) => {
          if (err2 || !s) return reject(err2);
          const chunks: Buffer[] = [];
          s.on('data', (c) => chunks.push(c));
          s.on('end', () => {
            out.set(e.fileName, Buffer.concat(chunks));
            zip.readEntry();
          });
        });
      });
      zip.on('end', () => resolve(out));
      zip.readEntry();
    });
  });
}

beforeAll(async () => {
  a = await makeArchive('export');
  other = await makeArchive('export-other');
  const editor = asToken(a.editor);
  ({ batchId, itemIds } = await batchWithPrints(editor, 'Export box', 3, 31));
  await editor.patch(`/api/items/${itemIds[0]}/metadata`, { caption: 'Großmutter Zoë am See (Łódź) — „Picknick“', dateEdtf: '1981-07-15', place: 'Lough Arrow', people: ['Zoë Hartigan', 'Ōta Hiro'] });
  await editor.patch(`/api/items/${itemIds[1]}/metadata`, { caption: 'The new car', dateEdtf: '198X', place: 'Sligo' });
  // The third print stays without a date: it goes to the undated folder.
  for (const id of itemIds) await decide(editor, id, 'accepted');
  const r = await editor.post('/api/exports', { selection: { kind: 'batch', batchId }, includeOriginals: true });
  expect(r.status).toBe(202);
  expect(r.headers.get('location')).toBe(`/api/exports/${r.body.id}`);
  const done = await waitExport(editor, r.headers.get('location')!);
  expect(done).toMatchObject({ state: 'ready', verified: true, items: 3 });
  const dl = await downloadBytes(editor, done.downloadUrl);
  expect(dl.status).toBe(200);
  expect(dl.headers.get('content-type')).toBe('application/zip');
  zipBytes = dl.bytes;
  expect(sha256(zipBytes)).toBe(done.zipSha256);
  files = await unzip(zipBytes);
  base = [...files.keys()][0].split('/')[0];
  tmp = await fs.mkdtemp(path.join(os.tmpdir(), 'dl-bag-'));
}, 400_000);
afterAll(async () => {
  await closeDb();
  if (tmp) await fs.rm(tmp, { recursive: true, force: true });
});

const inBag = (p: string) => files.get(`${base}/${p}`);

describe('the exported bag follows RFC 8493', () => {
  it('holds one bag folder with bagit.txt exactly as §2.1.1 gives it', () => {
    expect([...files.keys()].every((k) => k.startsWith(`${base}/`))).toBe(true);
    expect(inBag('bagit.txt')!.toString('utf8')).toBe('BagIt-Version: 1.0\nTag-File-Character-Encoding: UTF-8\n');
  });

  it('lists every payload file in manifest-sha256.txt with its right SHA-256, and nothing else', () => {
    const payload = [...files.keys()].filter((k) => k.startsWith(`${base}/data/`)).map((k) => k.slice(base.length + 1));
    const lines = inBag('manifest-sha256.txt')!.toString('utf8').trim().split('\n');
    const listed = new Map(lines.map((l) => { const i = l.indexOf(' '); return [l.slice(i + 1), l.slice(0, i)]; }));
    expect([...listed.keys()].sort()).toEqual(payload.sort());
    for (const p of payload) expect(listed.get(p), p).toBe(sha256(inBag(p)!));
    // 3 corrected JPEGs, 3 originals, the CSV; beside them the pages to look at it in a browser, listed like the rest
    expect(payload.filter((p) => p !== 'data/index.html' && !p.startsWith('data/browse/')).length).toBe(7);
    expect(listed.has('data/index.html')).toBe(true);
  });

  it('gives Payload-Oxum as total octets and count, and a YYYY-MM-DD Bagging-Date with the archive name', () => {
    const payload = [...files.keys()].filter((k) => k.startsWith(`${base}/data/`));
    const octets = payload.reduce((s, k) => s + files.get(k)!.length, 0);
    const info = inBag('bag-info.txt')!.toString('utf8');
    expect(info).toContain(`Payload-Oxum: ${octets}.${payload.length}\n`);
    expect(info).toMatch(/^Bagging-Date: \d{4}-\d{2}-\d{2}$/m);
    expect(info).toContain(`Source-Organization: ${a.name}`);
  });

  it('unpacks with Info-ZIP unzip, and coreutils sha256sum --check passes both manifests', async () => {
    const bag = await unpackWithUnzip(zipBytes, path.join(tmp, 'with-unzip'));
    expect(path.basename(bag)).toBe(base);
    const payload = await sha256sumCheck(bag, 'manifest-sha256.txt');
    expect(payload.code, payload.out).toBe(0);
    // one "<path>: OK" line per payload file: 3 corrected JPEGs, 3 originals, the CSV, and the 12 files of
    // the pages (index.html, the stylesheet, 3 thumbnails, 3 years, 1 box, 2 people, the about page)
    expect(payload.stdout.trim().split('\n').filter((l) => l.endsWith(': OK'))).toHaveLength(19);
    const tags = await sha256sumCheck(bag, 'tagmanifest-sha256.txt');
    expect(tags.code, tags.out).toBe(0);
    // and sha256sum notices a changed byte, naming the file
    const photo = path.join(bag, 'data/photos/undated/undated 0003.jpg');
    const buf = await fs.readFile(photo);
    buf[buf.length >> 1] ^= 0x01;
    await fs.writeFile(photo, buf);
    const damaged = await sha256sumCheck(bag, 'manifest-sha256.txt');
    expect(damaged.code).not.toBe(0);
    expect(damaged.stdout).toContain('data/photos/undated/undated 0003.jpg: FAILED');
  });

  it('covers every tag file in tagmanifest-sha256.txt', () => {
    const lines = inBag('tagmanifest-sha256.txt')!.toString('utf8').trim().split('\n');
    const listed = new Map(lines.map((l) => { const i = l.indexOf(' '); return [l.slice(i + 1), l.slice(0, i)]; }));
    expect([...listed.keys()].sort()).toEqual(['bag-info.txt', 'bagit.txt', 'manifest-sha256.txt']);
    for (const [p, h] of listed) expect(h).toBe(sha256(inBag(p)!));
  });

  it('files prints by year, decade and undated, named by date, caption and number', () => {
    const photos = [...files.keys()].filter((k) => k.includes('/data/photos/')).map((k) => k.split('/data/photos/')[1]).sort();
    expect(photos).toEqual(['1980s/1980s The new car 0002.jpg', '1981/1981-07-15 Großmutter Zoë am See (Łódź) — „Picknick“ 0001.jpg', 'undated/undated 0003.jpg'].sort());
  });

  it('lists every print with its metadata in photos.csv, accents intact', () => {
    const csv = inBag('data/photos.csv')!.toString('utf8');
    expect(csv.split('\n').filter(Boolean)).toHaveLength(4);
    expect(csv).toContain('Zoë Hartigan; Ōta Hiro');
    expect(csv).toContain('15 July 1981');
  });
});

describe('metadata embedded in the exported JPEGs', () => {
  it('reads back caption, people, place and an exact date with exifreader, non-ASCII intact', () => {
    const key = [...files.keys()].find((k) => k.includes('/photos/1981/'))!;
    const tags = ExifReader.load(files.get(key)!, { expanded: true }) as any;
    expect(tags.xmp.description.description).toBe('Großmutter Zoë am See (Łódź) — „Picknick“');
    expect(tags.xmp.subject.value.map((v: any) => v.description)).toEqual(['Zoë Hartigan', 'Ōta Hiro', 'Lough Arrow']);
    expect(tags.xmp.DateCreated.description).toBe('1981-07-15');
    // EXIF DateTimeOriginal form "YYYY:MM:DD HH:MM:SS" (EXIF 2.3, tag 0x9003, CIPA DC-008), only for an exact day.
    expect(tags.exif.DateTimeOriginal.description).toBe('1981:07:15 00:00:00');
  });

  it('writes no EXIF DateTimeOriginal for "the 1980s", and its start year as photoshop:DateCreated', () => {
    const key = [...files.keys()].find((k) => k.includes('/photos/1980s/'))!;
    const tags = ExifReader.load(files.get(key)!, { expanded: true }) as any;
    expect(tags.xmp.description.description).toBe('The new car');
    expect(tags.exif?.DateTimeOriginal).toBeUndefined();
    expect(tags.xmp.DateCreated.description).toBe('1980');
    expect(tags.exif.ImageDescription.description).toBe('The new car');
  });
});

describe('metadata embedded in the exported JPEGs, read back with ExifTool', () => {
  async function tagsOf(folder: string): Promise<Record<string, any>> {
    const key = [...files.keys()].find((k) => k.includes(`/photos/${folder}/`))!;
    const file = path.join(tmp, `exiftool-${folder}.jpg`);
    await fs.writeFile(file, files.get(key)!);
    return exiftool(file);
  }

  it('reads caption, people, place and an exact date, non-ASCII intact', async () => {
    const tags = await tagsOf('1981');
    expect(tags['XMP-dc:Description']).toBe('Großmutter Zoë am See (Łódź) — „Picknick“');
    expect(tags['XMP-dc:Subject']).toEqual(['Zoë Hartigan', 'Ōta Hiro', 'Lough Arrow']);
    // ExifTool gives every date it reads in EXIF's colon form, XMP's "1981-07-15" included
    expect(tags['XMP-photoshop:DateCreated']).toBe('1981:07:15');
    expect(tags['ExifIFD:DateTimeOriginal']).toBe('1981:07:15 00:00:00');
    // the same caption in IPTC IIM, declared UTF-8 by 1:90 = ESC % G (IIM 4.2), with a digest that matches
    expect(tags['IPTC:Caption-Abstract']).toBe('Großmutter Zoë am See (Łódź) — „Picknick“');
    expect(tags['IPTC:CodedCharacterSet']).toBe('\u001b%G');
    expect(tags['IPTC:DateCreated']).toBe('1981:07:15');
    expect(tags['File:CurrentIPTCDigest']).toBe(tags['Photoshop:IPTCDigest']);
    expect(tags['ExifTool:Warning']).toBeUndefined();
  });

  it('finds no exact date for "the 1980s" but its start year, and the caption in EXIF too', async () => {
    const tags = await tagsOf('1980s');
    expect(tags['XMP-dc:Description']).toBe('The new car');
    expect(tags['IFD0:ImageDescription']).toBe('The new car');
    expect(tags['ExifIFD:DateTimeOriginal']).toBeUndefined();
    expect(tags['XMP-photoshop:DateCreated']).toBe(1980);
    expect(tags['ExifTool:Warning']).toBeUndefined();
  });
});

/** Mean absolute difference of two JPEGs' decoded pixels, per channel value (0-255), and their sizes. */
async function pixelDifference(a: Buffer, b: Buffer): Promise<{ mean: number; sizes: number[][] }> {
  const [pa, pb] = await Promise.all([a, b].map((j) => sharp(j).raw().toBuffer({ resolveWithObject: true })));
  let sum = 0;
  for (let i = 0; i < pa.data.length; i++) sum += Math.abs(pa.data[i] - pb.data[i]);
  return { mean: sum / pa.data.length, sizes: [[pa.info.width, pa.info.height], [pb.info.width, pb.info.height]] };
}

describe('the exported pixels', () => {
  it('are a render of the same correction from the scan, one generation: closer to it than a re-encoded copy of the render', async () => {
    const key = [...files.keys()].find((k) => k.includes('/photos/1981/'))!;
    const exported = files.get(key)!;
    const item = (await Item.findByPk(itemIds[0]))!;
    const original = (await Original.findByPk(item.originalId))!;
    const correction = (await Correction.findOne({ where: { itemId: item.id, version: item.currentVersion! } }))!;
    const scanBytes = await storage().readBuffer(original.storageKey);
    const fresh = (await renderCorrected(scanBytes, correctionSchema.parse(correction.params))).buffer;
    const own = await pixelDifference(exported, fresh);
    expect(own.sizes[0]).toEqual(own.sizes[1]);
    // the engine's render is deterministic (same tables, same libjpeg settings): the same pixels
    expect(own.mean).toBeLessThan(0.05);
    // what the export wrote before: the render decoded and encoded again at quality 95
    const secondGeneration = await sharp(fresh).jpeg({ quality: 95, chromaSubsampling: '4:2:0' }).toBuffer();
    const reencoded = await pixelDifference(secondGeneration, fresh);
    expect(reencoded.mean).toBeGreaterThan(own.mean);
    expect(reencoded.mean).toBeGreaterThan(0.05);
  });

  it('carry the sRGB profile, read back with ExifTool and with exifreader', async () => {
    const key = [...files.keys()].find((k) => k.includes('/photos/1981/'))!;
    const file = path.join(tmp, 'icc-check.jpg');
    await fs.writeFile(file, files.get(key)!);
    const tags = await exiftool(file);
    // ICC.1:2010 profile description tag 'desc': libvips' built-in profile calls itself "sRGB"
    expect(tags['ICC_Profile:ProfileDescription']).toBe('sRGB');
    expect(tags['ICC-header:ColorSpaceData']).toBe('RGB ');
    const read = ExifReader.load(files.get(key)!, { expanded: true }) as any;
    expect(read.icc?.['ICC Description']?.description ?? read.icc?.['Profile Description']?.description).toMatch(/sRGB/);
    expect(tags['ExifTool:Warning']).toBeUndefined();
  });
});

describe('npm run verify-bag', () => {
  async function unpacked(name: string): Promise<string> {
    const dir = path.join(tmp, name);
    for (const [k, buf] of files) {
      const p = path.join(dir, k.slice(base.length + 1));
      await fs.mkdir(path.dirname(p), { recursive: true });
      await fs.writeFile(p, buf);
    }
    return dir;
  }
  const verify = (target: string) => run(process.execPath, ['--import', 'tsx', 'src/scripts/verify-bag.ts', target]).then((r) => ({ code: 0, out: r.stdout }), (e) => ({ code: e.code as number, out: String(e.stdout) }));

  it('passes the zip as downloaded and its unpacked folder', async () => {
    const zipPath = path.join(tmp, 'export.zip');
    await fs.writeFile(zipPath, zipBytes);
    expect((await verify(zipPath)).code).toBe(0);
    const r = await verify(await unpacked('clean'));
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/ok: 19 payload files/);
  });

  it('catches one changed byte, one missing and one extra file, naming each, and exits non-zero', async () => {
    const dir = await unpacked('damaged');
    const photos = (await fs.readdir(path.join(dir, 'data/photos/1981')));
    const changed = path.join(dir, 'data/photos/1981', photos[0]);
    const buf = await fs.readFile(changed);
    buf[Math.floor(buf.length / 2)] ^= 0x01;
    await fs.writeFile(changed, buf);
    await fs.rm(path.join(dir, 'data/photos.csv'));
    await fs.writeFile(path.join(dir, 'data/photos/stray.jpg'), 'not in the manifest');
    const r = await verify(dir);
    expect(r.code).toBe(1);
    expect(r.out).toContain(`changed: data/photos/1981/${photos[0]}`);
    expect(r.out).toContain('missing: data/photos.csv');
    expect(r.out).toContain('extra: data/photos/stray.jpg');
  });
});

describe('who may export', () => {
  it('lets viewers neither start nor download exports, and hides exports from another archive (404)', async () => {
    const list = await asToken(a.editor).get('/api/exports');
    const id = list.body.exports[0].id;
    expect((await asToken(a.viewer).post('/api/exports', { selection: { kind: 'since_last' } })).status).toBe(403);
    expect((await downloadBytes(asToken(a.viewer), `/api/exports/${id}/download`)).status).toBe(403);
    expect((await downloadBytes(asToken(other.owner), `/api/exports/${id}/download`)).status).toBe(404);
    expect((await asToken(other.owner).get(`/api/exports/${id}`)).status).toBe(404);
  });

  it('refuses a bad choice with 400 and an empty one with 409', async () => {
    const editor = asToken(a.editor);
    expect((await editor.post('/api/exports', { selection: { kind: 'everything' } })).status).toBe(400);
    expect((await editor.post('/api/exports', { selection: { kind: 'batch', batchId }, namePattern: '{date}' })).status).toBe(400);
    // Everything was exported just now, so nothing is new since the last export.
    const r = await editor.post('/api/exports', { selection: { kind: 'since_last' } });
    expect(r.status).toBe(409);
    expect(r.body.error.code).toBe('nothing_to_export');
  });

  it('tells the requester by e-mail when the export is ready (the outbox of the mail fake)', async () => {
    let mails: Awaited<ReturnType<typeof listOutbox>> = [];
    for (let i = 0; i < 20 && mails.length === 0; i++) {
      mails = (await listOutbox()).filter((m) => m.to.includes(a.editor.email) && /export of the .* is ready/i.test(m.subject));
      if (!mails.length) await new Promise((r) => setTimeout(r, 500));
    }
    expect(mails.length).toBeGreaterThanOrEqual(1);
    expect(mails[0].text).toMatch(/\/export#export-/);
  });
});

describe('an export of a print whose full-size render is not made yet', () => {
  it('renders the print from its scan, at full size', async () => {
    const editor = asToken(a.editor);
    const id = itemIds[2];
    // As a print is between "ready" and its render (jobs/render.ts feeds renders once nothing waits for analysis).
    await Item.update({ renderKey: null, renderVersion: null }, { where: { id } });
    const r = await editor.post('/api/exports', { selection: { kind: 'items', itemIds: [id] } });
    expect(r.status).toBe(202);
    const done = await waitExport(editor, r.headers.get('location')!);
    expect(done).toMatchObject({ state: 'ready', verified: true, items: 1 });
    const zip = (await downloadBytes(editor, done.downloadUrl)).bytes;
    const bag = await unzip(zip);
    const unpacked = await unpackWithUnzip(zip, path.join(tmp, 'render-missing'));
    const checked = await sha256sumCheck(unpacked, 'manifest-sha256.txt');
    expect(checked.code, checked.out).toBe(0);
    const photos = [...bag.entries()].filter(([k]) => k.includes('/data/photos/'));
    expect(photos).toHaveLength(1);
    const meta = await sharp(photos[0][1]).metadata();
    expect([meta.format, meta.width, meta.height]).toEqual(['jpeg', 600, 400]);
  }, 120_000);
});
