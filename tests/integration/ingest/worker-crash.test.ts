import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import sharp from 'sharp';
import { Correction, Item, Original, closeDb } from '../../../db/index.ts';
import { storage } from '../../../src/lib/server/storage.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { recordedWorkers, spawnWorker, stopWorker } from '../../support/processes.ts';
import { createBatch, generatedScans, sha256, uploadAll, waitFullSize, waitSettled } from '../../support/scans.ts';

let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('crash');
});
afterAll(() => closeDb());

describe('a worker killed in the middle of a batch', () => {
  it('leaves every item ready exactly once, then rendered, with its files intact and its SHA-256 matching', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Killed mid-batch');
    const files = await generatedScans(24, 5000);
    const replies = await uploadAll(editor, batchId, files, 4);
    expect(replies.every((r) => r.status === 201)).toBe(true);

    // Kill -9 while some items are done, some are being analysed (their jobs held by the worker) and others wait.
    const deadline = Date.now() + 60_000;
    let counts: any;
    do {
      counts = (await editor.get(`/api/batches/${batchId}`)).body.counts;
      if (counts.ready >= 2 && counts.analysing > 0) break;
      await new Promise((r) => setTimeout(r, 100));
    } while (Date.now() < deadline);
    expect(counts.analysing).toBeGreaterThan(0);
    for (const pid of recordedWorkers()) await stopWorker(pid, 'SIGKILL');
    const atKill = counts;
    spawnWorker('worker-after-kill');

    const status = await waitSettled(editor, batchId, 240_000);
    expect(status.counts, `counts at the kill: ${JSON.stringify(atKill)}`).toMatchObject({ ready: 24, failed: 0, total: 24 });

    // Kill it again while the full-size renders are being made: each print still gets its render once.
    const renderDeadline = Date.now() + 120_000;
    do {
      counts = (await editor.get(`/api/batches/${batchId}`)).body.counts;
      if (counts.fullSize >= 1) break;
      await new Promise((r) => setTimeout(r, 100));
    } while (Date.now() < renderDeadline);
    expect(counts.fullSize).toBeLessThan(24);
    for (const pid of recordedWorkers()) await stopWorker(pid, 'SIGKILL');
    spawnWorker('worker-after-second-kill');
    await waitFullSize(editor, batchId, 24, 240_000);

    const items = await Item.findAll({ where: { batchId }, include: [{ model: Original, as: 'original' }] });
    expect(items).toHaveLength(24);
    expect(new Set(items.map((i) => i.seq)).size).toBe(24);
    const uploaded = new Map(files.map((f) => [sha256(f.bytes), f.name]));
    for (const item of items as (Item & { original: Original })[]) {
      // exactly one proposed correction, however many times the job ran
      expect(await Correction.count({ where: { itemId: item.id, origin: 'proposed' } })).toBe(1);
      const original = await storage().readBuffer(item.original.storageKey);
      expect(sha256(original)).toBe(item.original.sha256);
      expect(uploaded.get(item.original.sha256)).toBe(item.originalName);
      expect(item.renderVersion).toBe(item.currentVersion);
      const render = await storage().readBuffer(item.renderKey!);
      const meta = await sharp(render).metadata();
      expect([meta.format, meta.width, meta.height]).toEqual(['jpeg', 600, 400]);
      await sharp(render).raw().toBuffer(); // decodes whole: not a half-written file
    }
    expect(await Original.count({ where: { archiveId: a.id } })).toBe(24);
  }, 300_000);
});
