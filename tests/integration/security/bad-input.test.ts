import { spawn } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Batch, closeDb, Item, Original } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { AWKWARD_NAMES, badCorpus, type CorpusFile } from '../../support/bad-corpus.ts';
import { Client } from '../../support/http.ts';
import { createBatch, generatedScans, upload, waitFullSize, waitSettled } from '../../support/scans.ts';

let a: TestArchive;
let corpus: CorpusFile[];
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'drawerlight-bad-'));
beforeAll(async () => {
  a = await makeArchive('bad-input');
  corpus = await badCorpus();
});
afterAll(async () => {
  fs.rmSync(tmp, { recursive: true, force: true });
  await closeDb();
});

describe('bad input through the web upload', () => {
  it('gives every file of the corpus its right result or a clear refusal, and the rest of the batch is unaffected', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Awkward files');
    const good = await generatedScans(2, 7100, { width: 240, height: 160 });
    const before = await upload(editor, batchId, good[0].name, good[0].bytes);
    expect(before.status).toBe(201);

    const replies = new Map<string, Awaited<ReturnType<typeof upload>>>();
    for (const f of corpus) replies.set(f.name, await upload(editor, batchId, f.name, f.bytes));
    const after = await upload(editor, batchId, good[1].name, good[1].bytes);
    expect(after.status).toBe(201);

    for (const f of corpus) {
      const r = replies.get(f.name)!;
      if (f.expect.outcome === 'refused') {
        expect([400, 413, 415], `${f.label}: ${r.text}`).toContain(r.status);
        expect(r.body.error.code, f.label).toBe(f.expect.code);
        expect(r.body.error.message.length, f.label).toBeGreaterThan(10);
      } else {
        expect(r.status, `${f.label}: ${r.text}`).toBe(201);
      }
    }
    expect((await editor.get('/api/me')).status).toBe(200);

    const status = await waitSettled(editor, batchId);
    const accepted = corpus.filter((f) => f.expect.outcome === 'ready');
    const failing = corpus.filter((f) => f.expect.outcome === 'failed');
    expect(status.counts).toMatchObject({ ready: accepted.length + 2, failed: failing.length });

    const items = await Item.findAll({ where: { batchId }, include: [{ model: Original, as: 'original' }] });
    expect(items.map((i) => i.originalName).sort()).toEqual([...accepted, ...failing].map((f) => f.name).concat(good.map((g) => g.name)).sort());
    for (const f of failing) {
      const item = items.find((i) => i.originalName === f.name)!;
      expect(item.state, f.label).toBe('failed');
      if (f.expect.outcome === 'failed') expect(item.failureReason ?? '', f.label).toMatch(f.expect.reason);
    }
    // every accepted scan gets its full-size corrected JPEG, of the right size
    await waitFullSize(editor, batchId, accepted.length + 2);
    for (const f of accepted) {
      const item = items.find((i) => i.originalName === f.name)!;
      const res = await fetch(`${process.env.APP_URL}/api/items/${item.id}/corrected`, { headers: { authorization: `Bearer ${a.editor.token}` } });
      expect(res.status, f.label).toBe(200);
      const m = await sharp(Buffer.from(await res.arrayBuffer())).metadata();
      expect(m.format, f.label).toBe('jpeg');
      if (f.expect.outcome === 'ready' && f.expect.width) expect([m.width, m.height], f.label).toEqual([f.expect.width, f.expect.height]);
    }
  });

  it('treats awkward file names as labels: no path is made from them, control characters are dropped, letters kept', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Awkward names');
    const scans = await generatedScans(AWKWARD_NAMES.length, 7200, { width: 240, height: 160 });
    for (let i = 0; i < AWKWARD_NAMES.length; i++) {
      const r = await upload(editor, batchId, AWKWARD_NAMES[i], scans[i].bytes);
      expect(r.status, r.text).toBe(201);
    }
    const items = await Item.findAll({ where: { batchId }, include: [{ model: Original, as: 'original' }] });
    for (const item of items) {
      expect(item.originalName).not.toMatch(/[\u0000-\u001f\u007f]/);
      expect(item.originalName.length).toBeLessThanOrEqual(300);
      const key = (item as Item & { original: Original }).original.storageKey;
      expect(key).toMatch(/^originals\/[0-9a-f]{2}\/[0-9a-f]{64}/);
    }
    expect(items.map((i) => i.originalName)).toContain('Großmutter am Öresund – Sommer 1981 ✿.jpg');
    expect(fs.existsSync('/etc/drawerlight-escape.jpg')).toBe(false);
    expect(fs.existsSync(path.resolve(process.env.STORAGE_DIR!, '../../../etc/drawerlight-escape.jpg'))).toBe(false);
  });

  it('refuses an upload without a name or a body with a clear 400', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'No names');
    const r = await editor.request('POST', `/api/batches/${batchId}/files`, { body: Buffer.from('x') as unknown as BodyInit, headers: { 'content-type': 'application/octet-stream' } });
    expect(r.status).toBe(400);
    expect(r.body.error.fields).toHaveProperty('x-file-name');
    expect((await new Client().get('/api/me')).status).toBe(401);
  });
});

describe('bad input through the ingest command', () => {
  it('ingests the good files of a folder of awkward ones and names each refusal in one line', async () => {
    // An archive of its own: the same bytes uploaded above would be recognised as already there.
    const a = await makeArchive('bad-input-cli');
    const folder = path.join(tmp, 'scanner-out');
    fs.mkdirSync(folder, { recursive: true });
    for (const f of corpus) fs.writeFileSync(path.join(folder, f.name), f.bytes);
    const scans = await generatedScans(2, 7300, { width: 240, height: 160 });
    fs.writeFileSync(path.join(folder, 'bell\u0007name.jpg'), scans[0].bytes);
    fs.writeFileSync(path.join(folder, 'Öresund 1981.jpg'), scans[1].bytes);

    const child = spawn(process.execPath, ['--import', 'tsx', 'src/scripts/ingest.ts', '--archive', a.slug, '--batch', 'Scanner folder', folder], { env: process.env });
    let out = '';
    child.stdout.on('data', (d) => (out += d));
    child.stderr.on('data', (d) => (out += d));
    const code = await new Promise<number>((r) => child.on('exit', (c) => r(c ?? -1)));
    expect(code, out).toBe(1);
    for (const f of corpus.filter((x) => x.expect.outcome === 'refused')) expect(out, f.label).toMatch(new RegExp(`refused\\s+${f.name.replace('.', '\\.')}: \\S`));

    const batch = (await Batch.findOne({ where: { archiveId: a.id, name: 'Scanner folder' } }))!;
    const status = await waitSettled(asToken(a.editor), batch.id);
    const expectedReady = corpus.filter((f) => f.expect.outcome === 'ready').length + 2;
    expect(status.counts).toMatchObject({ ready: expectedReady, failed: corpus.filter((f) => f.expect.outcome === 'failed').length });
    const names = (await Item.findAll({ where: { batchId: batch.id } })).map((i) => i.originalName);
    expect(names).toContain('Öresund 1981.jpg');
    expect(names).toContain('bellname.jpg');
  });
});
