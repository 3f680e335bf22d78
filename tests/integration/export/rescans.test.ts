import { execFile } from 'node:child_process';
import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, Item, Original } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { batchWithPrints, decide, downloadBytes, scan, sha256, waitReady } from './helpers.ts';

const run = promisify(execFile);
let a: TestArchive;
let other: TestArchive;
let batchId: string;
let items: string[];

beforeAll(async () => {
  a = await makeArchive('rescans');
  other = await makeArchive('rescans-other');
  const editor = asToken(a.editor);
  ({ batchId, itemIds: items } = await batchWithPrints(editor, 'Rescan drawer', 3, 51));
  await decide(editor, items[0], 'rescan', { negativeAvailable: 'yes', negativeLocation: 'Blue tin, attic', rescanNote: 'Strip of 4, frame 2 — Zoë’s birthday' });
  await decide(editor, items[1], 'rescan', { negativeAvailable: 'unknown' });
  await decide(editor, items[2], 'accepted');
}, 300_000);
afterAll(() => closeDb());

const rescanUpload = (client: ReturnType<typeof asToken>, itemId: string, name: string, bytes: Buffer) =>
  client.request('POST', `/api/items/${itemId}/rescan`, { body: bytes as unknown as BodyInit, headers: { 'content-type': 'application/octet-stream', 'x-file-name': encodeURIComponent(name) } });

describe('the rescan list', () => {
  it('lists every print set aside, with where its negative is and the note, as CSV to take to the cupboard', async () => {
    const r = await downloadBytes(asToken(a.viewer), '/api/rescans.csv');
    expect(r.status).toBe(200);
    expect(r.headers.get('content-type')).toMatch(/text\/csv/);
    const text = r.bytes.toString('utf8').replace(/^\ufeff/, '');
    const lines = text.trim().split(/\r?\n/);
    expect(lines[0]).toMatch(/^Batch,Source,Print,/);
    expect(lines).toHaveLength(3);
    expect(text).toContain('Blue tin, attic');
    expect(text).toContain('Strip of 4, frame 2 — Zoë’s birthday');
    expect(text).not.toContain(items[2]);
  });

  it('filters by where the negative is kept (empty: not recorded) and by batch', async () => {
    const byPlace = (await downloadBytes(asToken(a.editor), `/api/rescans.csv?location=${encodeURIComponent('Blue tin, attic')}`)).bytes.toString('utf8');
    expect(byPlace).toContain(items[0]);
    expect(byPlace).not.toContain(items[1]);
    const unrecorded = (await downloadBytes(asToken(a.editor), '/api/rescans.csv?location=')).bytes.toString('utf8');
    expect(unrecorded).toContain(items[1]);
    expect(unrecorded).not.toContain(items[0]);
    const byBatch = (await downloadBytes(asToken(a.editor), `/api/rescans.csv?batch=${batchId}`)).bytes.toString('utf8');
    expect(byBatch.trim().split(/\r?\n/)).toHaveLength(3);
    expect((await downloadBytes(asToken(other.owner), '/api/rescans.csv')).bytes.toString('utf8')).not.toContain(items[0]);
  });

  it('shows the list as a page with a printable view', async () => {
    const { asSession } = await import('../../support/fixtures.ts');
    const page = await (await asSession(a.viewer)).get('/rescans', { accept: 'text/html' });
    expect(page.status).toBe(200);
    expect(page.text).toContain('Blue tin, attic');
    // the print styles come with the page's own stylesheets (no inline styles under the content security policy)
    const sheets = [...page.text.matchAll(/<link[^>]+rel="stylesheet"[^>]+href="([^"]+)"/g)].map((m) => m[1]);
    const css = await Promise.all(sheets.map(async (href) => (await fetch(new URL(href, process.env.APP_URL)).then((r) => r.text()))));
    expect(page.text + css.join('\n')).toContain('@media print');
  });
});

describe('attaching a rescan from the negative', () => {
  it('makes the negative\'s scan the current image, analysed again, and keeps the print scan', async () => {
    const editor = asToken(a.editor);
    const before = await Item.findByPk(items[0]);
    const negative = await scan(901);
    const r = await rescanUpload(editor, items[0], 'negative-frame-2.jpg', negative);
    expect(r.status).toBe(202);
    expect(r.headers.get('location')).toBe(`/api/items/${items[0]}`);
    expect(r.body.printOriginalId).toBe(before!.originalId);
    await waitReady(editor, items[0]);
    const after = await Item.findByPk(items[0]);
    expect(after!.printOriginalId).toBe(before!.originalId);
    expect(after!.originalId).not.toBe(before!.originalId);
    expect((await Original.findByPk(after!.originalId))!.sha256).toBe(sha256(negative));
    // The untouched print scan is still stored, byte for byte.
    expect(await Original.findByPk(before!.originalId)).not.toBeNull();
    const original = await downloadBytes(editor, `/api/items/${items[0]}/original`);
    expect(sha256(original.bytes)).toBe(sha256(negative));
    // No longer set aside: it waits for a fresh look in review.
    const csv = (await downloadBytes(editor, '/api/rescans.csv')).bytes.toString('utf8');
    expect(csv).not.toContain(items[0]);
  });

  it('refuses the same scan again (409), a file that is no scan (415), viewers (403) and another archive (404)', async () => {
    const editor = asToken(a.editor);
    const item = await Item.findByPk(items[0]);
    const current = await Original.findByPk(item!.originalId);
    const { storage } = await import('../../../src/lib/server/storage.ts');
    const same = await storage().readBuffer(current!.storageKey);
    expect((await rescanUpload(editor, items[0], 'again.jpg', same)).status).toBe(409);
    const text = await rescanUpload(editor, items[1], 'notes.txt', Buffer.from('not a scan at all'));
    expect(text.status).toBe(415);
    expect((await Item.findByPk(items[1]))!.printOriginalId).toBeNull();
    expect((await rescanUpload(asToken(a.viewer), items[1], 'n.jpg', await scan(902))).status).toBe(403);
    expect((await rescanUpload(asToken(other.owner), items[1], 'n.jpg', await scan(903))).status).toBe(404);
  });

  it('attaches a rescan from the ingest command with --item', async () => {
    const dir = await fs.mkdtemp(path.join(os.tmpdir(), 'dl-rescan-'));
    const file = path.join(dir, 'negative-of-print-2.jpg');
    const negative = await scan(904);
    await fs.writeFile(file, negative);
    const before = await Item.findByPk(items[1]);
    const r = await run(process.execPath, ['--import', 'tsx', 'src/scripts/ingest.ts', '--item', items[1], '--as', a.editor.email, file], { env: process.env });
    expect(r.stdout).toMatch(/attached/);
    const after = await Item.findByPk(items[1]);
    expect(after!.printOriginalId).toBe(before!.originalId);
    expect((await Original.findByPk(after!.originalId))!.sha256).toBe(sha256(negative));
    await waitReady(asToken(a.editor), items[1]);
    await fs.rm(dir, { recursive: true, force: true });
  });
});
