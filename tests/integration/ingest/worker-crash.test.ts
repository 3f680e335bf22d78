import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import sharp from 'sharp';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { createBatch, generatedScans, sha256, uploadAll, waitFullSize, waitSettled } from '../../support/scans.ts';
import { until } from '../../support/until.ts';

// A stack of its own: the workers killed here are this file's, never the shared worker that the
// other test files running at the same time depend on.
let stack: IsolatedStack;
let a: TestArchive;
beforeAll(async () => {
  stack = await startIsolatedStack({ label: 'crash', workers: 1 });
  a = await stack.makeArchive('crash');
});
afterAll(() => stack?.stop());

describe('a worker killed in the middle of a batch', () => {
  it('leaves every item ready exactly once, then rendered, with its files intact and its SHA-256 matching', async () => {
    const editor = stack.client(a.editor.token);
    const batchId = await createBatch(editor, 'Killed mid-batch');
    const files = await generatedScans(24, 5000);
    const replies = await uploadAll(editor, batchId, files, 4);
    expect(replies.every((r) => r.status === 201)).toBe(true);
    const counts = async () => (await editor.get(`/api/batches/${batchId}`)).body.counts;

    // Kill -9 while some items are done, some are being analysed (their jobs held by the worker) and others wait.
    let seen: any;
    const atKill = await until('two prints ready and others in analysis', async () => ((seen = await counts()).ready >= 2 && seen.analysing > 0 ? seen : null), 60_000, () => JSON.stringify(seen));
    const [killed] = stack.workerPids();
    await stack.stopWorkers('SIGKILL');
    stack.startWorker();
    expect(stack.workerPids()).not.toContain(killed);

    const status = await waitSettled(editor, batchId, 240_000);
    expect(status.counts, `counts at the kill: ${JSON.stringify(atKill)}`).toMatchObject({ ready: 24, failed: 0, total: 24 });

    // Kill it again while the full-size renders are being made: each print still gets its render once.
    const atSecondKill = await until('a first full-size render', async () => ((seen = await counts()).fullSize >= 1 ? seen : null), 120_000, () => JSON.stringify(seen));
    expect(atSecondKill.fullSize).toBeLessThan(24);
    await stack.stopWorkers('SIGKILL');
    stack.startWorker();
    await waitFullSize(editor, batchId, 24, 240_000);

    const items = await stack.query<{ id: string; seq: number; original_name: string; current_version: number; render_version: number; render_key: string; sha256: string; storage_key: string }>(
      `SELECT i.id, i.seq, i.original_name, i.current_version, i.render_version, i.render_key, o.sha256, o.storage_key
         FROM items i JOIN originals o ON o.id = i.original_id WHERE i.batch_id = :batchId`,
      { batchId },
    );
    expect(items).toHaveLength(24);
    expect(new Set(items.map((i) => i.seq)).size).toBe(24);
    const proposed = await stack.query<{ item_id: string; n: string }>(
      "SELECT c.item_id, count(*) AS n FROM corrections c JOIN items i ON i.id = c.item_id WHERE i.batch_id = :batchId AND c.origin = 'proposed' GROUP BY c.item_id",
      { batchId },
    );
    const uploaded = new Map(files.map((f) => [sha256(f.bytes), f.name]));
    for (const item of items) {
      // exactly one proposed correction, however many times the job ran
      expect(proposed.find((p) => p.item_id === item.id)?.n).toBe('1');
      const original = fs.readFileSync(path.join(stack.storageDir, item.storage_key));
      expect(sha256(original)).toBe(item.sha256);
      expect(uploaded.get(item.sha256)).toBe(item.original_name);
      expect(item.render_version).toBe(item.current_version);
      const render = fs.readFileSync(path.join(stack.storageDir, item.render_key));
      const meta = await sharp(render).metadata();
      expect([meta.format, meta.width, meta.height]).toEqual(['jpeg', 600, 400]);
      await sharp(render).raw().toBuffer(); // decodes whole: not a half-written file
    }
    const originals = await stack.query<{ n: string }>('SELECT count(*) AS n FROM originals WHERE archive_id = :archiveId', { archiveId: a.id });
    expect(originals[0].n).toBe('24');
  }, 300_000);
});
