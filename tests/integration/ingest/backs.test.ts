/**
 * Backs of prints through the real upload endpoint, database and queue: a back is kept as an
 * original, paired with its front (by file name, by feed order), never analysed as a print nor
 * counted as one; its text read on a queue of its own and suggested to its print; the batch
 * page's pairing by hand, and its refusals, which change nothing; the back beside its front in the export.
 * Backs are generated (tests/support/back-scans.ts), fronts are the demo's invented scenes.
 */
import { existsSync } from 'node:fs';
import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Item, Original, PrintBack, Suggestion, closeDb } from '../../../db/index.ts';
import { generatedBack } from '../../support/back-scans.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import type { Client } from '../../support/http.ts';
import { runTool, sha256sumCheck, unpackWithUnzip } from '../../support/outside-checks.ts';
import { decide, downloadBytes, waitExport } from '../export/helpers.ts';
import { createBatch, generatedScans, sha256, waitSettled } from '../../support/scans.ts';
import { until } from '../../support/until.ts';

let archive: TestArchive;
let editor: Client;
let batchId: string;
let otherBatchId: string;
const bytesOf = new Map<string, Buffer>();

const send = (batch: string, name: string, bytes: Buffer, uploadKey: string) =>
  editor.request('POST', `/api/batches/${batch}/files`, {
    body: new Uint8Array(bytes),
    headers: { 'content-type': 'application/octet-stream', 'x-file-name': encodeURIComponent(name), 'x-upload-key': uploadKey },
  });

const backRows = async (batch = batchId) => (await PrintBack.findAll({ where: { batchId: batch }, order: [['originalName', 'ASC']] })).map((b) => ({ id: b.id, name: b.originalName, front: b.frontItemId, by: b.pairedBy }));
const itemNamed = async (name: string, batch = batchId) => (await Item.findOne({ where: { batchId: batch, originalName: name } }))!;

beforeAll(async () => {
  archive = await makeArchive('backs');
  editor = asToken(archive.editor);
  batchId = await createBatch(editor, 'Duplex feed');
  otherBatchId = await createBatch(editor, 'Another drawer');
  const fronts = await generatedScans(5, 3101, { width: 600, height: 400 });
  const files: [string, Buffer][] = [
    // named backs, one uploaded before its front
    // at a size a print's back is scanned at, so its imprint can be read: "FEB 1973"
    ['0007_back.jpg', (await generatedBack('stamp', 1, { width: 1200, height: 800 })).bytes],
    ['0007.jpg', fronts[0].bytes],
    // a duplex feed: front, back, front, back
    ['scan_01.jpg', fronts[1].bytes],
    ['scan_02.jpg', (await generatedBack('blank', 2, { width: 600, height: 400 })).bytes],
    ['scan_03.jpg', fronts[2].bytes],
    ['scan_04.jpg', (await generatedBack('handwriting', 3, { width: 600, height: 400 })).bytes],
    ['scan_05.jpg', fronts[3].bytes],
    // a back whose front is not in the upload
    ['0099 reverse.jpg', (await generatedBack('both', 4, { width: 600, height: 400 })).bytes],
  ];
  for (const [name, bytes] of files) {
    bytesOf.set(name, bytes);
    const r = await send(batchId, name, bytes, 'duplex-drop');
    expect(r.status, r.text).toBe(201);
  }
  expect((await send(otherBatchId, 'elsewhere.jpg', fronts[4].bytes, 'other-drop')).status).toBe(201);
  await waitSettled(editor, batchId);
  await waitSettled(editor, otherBatchId);
}, 300_000);
afterAll(closeDb);

describe('backs at upload', () => {
  it('pairs each back with its front by name and by feed order, and keeps the orphan waiting', async () => {
    const rows = await backRows();
    expect(rows.map((r) => r.name)).toEqual(['0007_back.jpg', '0099 reverse.jpg', 'scan_02.jpg', 'scan_04.jpg']);
    const byName = Object.fromEntries(rows.map((r) => [r.name, r]));
    expect(byName['0007_back.jpg']).toMatchObject({ front: (await itemNamed('0007.jpg')).id, by: 'name' });
    expect(byName['scan_02.jpg']).toMatchObject({ front: (await itemNamed('scan_01.jpg')).id, by: 'feed order' });
    expect(byName['scan_04.jpg']).toMatchObject({ front: (await itemNamed('scan_03.jpg')).id, by: 'feed order' });
    expect(byName['0099 reverse.jpg']).toMatchObject({ front: null, by: null });
  });

  it('counts and lists only the fronts as prints; no back is corrected', async () => {
    const status = (await editor.get(`/api/batches/${batchId}`)).body;
    expect(status.counts.total).toBe(4);
    const items = (await editor.get(`/api/batches/${batchId}/items?brief=1`)).body.items as { originalName: string }[];
    expect(items.map((i) => i.originalName).sort()).toEqual(['0007.jpg', 'scan_01.jpg', 'scan_03.jpg', 'scan_05.jpg']);
    expect(await Item.count({ where: { batchId }, paranoid: false })).toBe(4);
  });

  it('keeps every back as an original: its bytes hashed, its file stored', async () => {
    for (const b of await PrintBack.findAll({ where: { batchId } })) {
      const original = (await Original.findByPk(b.originalId))!;
      expect(original.sha256).toBe(sha256(bytesOf.get(b.originalName)!));
      expect(existsSync(path.join(process.env.STORAGE_DIR!, original.storageKey))).toBe(true);
    }
  });

  it('shows the batch its backs, and each back as scanned', async () => {
    const listed = (await editor.get(`/api/batches/${batchId}/backs`)).body.backs as { id: string; frontSeq: number | null }[];
    expect(listed).toHaveLength(4);
    expect(listed.at(-1)!.frontSeq).toBeNull();
    const picture = await editor.request('GET', `/api/batches/${batchId}/backs/${listed[0].id}?size=preview`);
    expect(picture.status).toBe(200);
    expect(picture.headers.get('content-type')).toBe('image/jpeg');
    expect((await editor.request('GET', `/api/batches/${otherBatchId}/backs/${listed[0].id}`)).status).toBe(404);
  });

  it('keeps a back uploaded again once, as it keeps any scan once', async () => {
    const r = await send(batchId, '0007_back copy.jpg', bytesOf.get('0007_back.jpg')!, 'again');
    expect([200, 201]).toContain(r.status);
    await waitSettled(editor, batchId);
    expect((await backRows()).length).toBe(4);
    expect(await Item.count({ where: { batchId } })).toBe(4);
  });
});

describe('the text on the back', () => {
  it("is read on its own queue and suggested to the print, with the imprint's date in EDTF and where it came from", async () => {
    const back = (await PrintBack.findOne({ where: { batchId, originalName: '0007_back.jpg' } }))!;
    const front = await itemNamed('0007.jpg');
    const suggestion = await until('the suggestion read from the back', () => Suggestion.findOne({ where: { printBackId: back.id } }), 240_000);
    expect(suggestion.itemId).toBe(front.id);
    expect(suggestion.suggestedBy).toBeNull();
    expect(suggestion.backText).toMatch(/HARTIGAN/);
    // generated with the month and year of seed 1: February 1973
    expect(suggestion.dateEdtf).toBe('1973-02');
    expect(suggestion.note).toMatch(/Read from the back of the print: the date from "FEB 1973"/);
    // nothing is applied to the print until an editor accepts
    await front.reload();
    expect([front.backText, front.dateEdtf]).toEqual([null, null]);

    const shown = (await editor.get(`/api/items/${front.id}/suggestions`)).body.suggestions.find((x: { id: string }) => x.id === suggestion.id);
    expect(shown).toMatchObject({ fromBack: true, dateEdtf: '1973-02' });
    // a viewer cannot accept it, and the print stays as it was
    expect((await asToken(archive.viewer).post(`/api/suggestions/${suggestion.id}`, { decision: 'accept' })).status).toBe(403);
    await front.reload();
    expect([front.backText, front.dateEdtf]).toEqual([null, null]);
    const r = await editor.post(`/api/suggestions/${suggestion.id}`, { decision: 'accept' });
    expect(r.status, r.text).toBe(200);
    await front.reload();
    expect(front.backText).toMatch(/HARTIGAN/);
    expect(front.dateEdtf).toBe('1973-02');
  }, 300_000);
});

describe('pairing by hand', () => {
  const pair = (backId: string, printId: string | null, batch = batchId) => editor.post(`/api/batches/${batch}/backs`, { backId, printId });

  it('refuses a print of another batch and changes nothing', async () => {
    const before = await backRows();
    const orphan = before.find((b) => b.name === '0099 reverse.jpg')!;
    const r = await pair(orphan.id, (await itemNamed('elsewhere.jpg', otherBatchId)).id);
    expect(r.status).toBe(409);
    expect(await backRows()).toEqual(before);
  });

  it('refuses a print that already has a back, and a back paired twice, and changes nothing', async () => {
    const before = await backRows();
    const orphan = before.find((b) => b.name === '0099 reverse.jpg')!;
    expect((await pair(orphan.id, (await itemNamed('scan_01.jpg')).id)).status).toBe(409);
    const paired = before.find((b) => b.name === 'scan_02.jpg')!;
    expect((await pair(paired.id, (await itemNamed('scan_05.jpg')).id)).status).toBe(409);
    expect(await backRows()).toEqual(before);
  });

  it('refuses a viewer and changes nothing', async () => {
    const before = await backRows();
    const orphan = before.find((b) => b.name === '0099 reverse.jpg')!;
    const r = await asToken(archive.viewer).post(`/api/batches/${batchId}/backs`, { backId: orphan.id, printId: (await itemNamed('scan_05.jpg')).id });
    expect(r.status).toBe(403);
    expect(await backRows()).toEqual(before);
  });

  it('pairs a waiting back with a free print, and unpairs a back for good', async () => {
    const orphan = (await backRows()).find((b) => b.name === '0099 reverse.jpg')!;
    const front = await itemNamed('scan_05.jpg');
    const r = await pair(orphan.id, front.id);
    expect(r.status, r.text).toBe(200);
    expect(r.body.back).toMatchObject({ frontItemId: front.id, frontSeq: front.seq, pairedBy: 'hand' });
    const u = await pair(orphan.id, null);
    expect(u.status).toBe(200);
    expect((await backRows()).find((b) => b.id === orphan.id)).toMatchObject({ front: null, by: 'apart' });
    expect((await pair(orphan.id, null)).status).toBe(409);
  });
});

describe('backs in the export', () => {
  it('puts each back beside its front, names it in the front and in photos.csv, and lists it in the manifest', async () => {
    for (const print of await Item.findAll({ where: { batchId } })) await decide(editor, print.id, 'accepted');
    const r = await editor.post('/api/exports', { selection: { kind: 'batch', batchId } });
    expect(r.status, r.text).toBe(202);
    const status = await waitExport(editor, r.headers.get('location')!);
    expect(status.state, status.failureReason).toBe('ready');
    const dl = await downloadBytes(editor, status.downloadUrl);
    const bag = await unpackWithUnzip(dl.bytes, await fs.mkdtemp(path.join(os.tmpdir(), 'backs-export-')));
    const files = (await fs.readdir(path.join(bag, 'data/photos'), { recursive: true })).map(String).filter((f) => /\.(jpg|png|tif)$/.test(f)).sort();
    const backs = files.filter((f) => /_back\.jpg$/.test(f));
    // three prints kept their backs (the fourth was unpaired by hand above)
    expect(backs).toHaveLength(3);
    for (const b of backs) {
      const front = b.replace(/_back\.jpg$/, '.jpg');
      expect(files).toContain(front);
      // the back goes out as it was scanned: the original's own bytes
      const bytes = await fs.readFile(path.join(bag, 'data/photos', b));
      expect(await PrintBack.count({ where: { batchId }, include: [{ association: 'original', where: { sha256: sha256(bytes) } }] })).toBe(1);
      const named = await runTool('exiftool', ['-s3', '-XMP-drawerlight:BackScanFile', path.join(bag, 'data/photos', front)]);
      expect(named.stdout.trim()).toBe(path.basename(b));
    }
    const csv = await fs.readFile(path.join(bag, 'data/photos.csv'), 'utf8');
    const [header, ...rows] = csv.replace(/^\ufeff/, '').trim().split(/\r?\n/);
    const at = header.split(',').indexOf('back_file');
    expect(at).toBeGreaterThan(0);
    expect(rows.filter((row) => /_back\.jpg/.test(row))).toHaveLength(3);
    const manifest = await fs.readFile(path.join(bag, 'manifest-sha256.txt'), 'utf8');
    for (const b of backs) expect(manifest).toContain(`data/photos/${b}`);
    const check = await sha256sumCheck(bag, 'manifest-sha256.txt');
    expect(check.code, check.out).toBe(0);
  }, 300_000);
});
