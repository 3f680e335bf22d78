import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generatedScans, createBatch, waitSettled } from '../../support/scans.ts';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { originalsOnDisk, temporaryFiles, until, uploadRetrying } from './helpers.ts';

let stack: IsolatedStack;
let a: TestArchive;
beforeAll(async () => {
  // Orphaned staged uploads are cleared after 6 s here (30 min by default), so the test sees the sweep.
  stack = await startIsolatedStack({ label: 'killbatch', workers: 1, env: { STALE_UPLOAD_MINUTES: '0.1' } });
  a = await stack.makeArchive('killbatch');
});
afterAll(() => stack?.stop());

describe('the worker and then the web server killed with kill -9 during a 50-file batch', () => {
  it('loses nothing and stores nothing twice: every file once as one item, each ready once, every original intact', async () => {
    const editor = stack.client(a.editor.token);
    const batchId = await createBatch(editor, 'Killed twice');
    // Small scans (400x300): the faults matter here, not the pixels.
    const files = await generatedScans(50, 7000, { width: 400, height: 300 });

    let stored = 0;
    const uploads = uploadRetrying(editor, batchId, files, 4, (n) => (stored = n));

    // First the worker, while it holds analyses; then the web server, while uploads are in flight.
    await until('ten files stored and analyses running', async () => stored >= 10 && (await stack.query<{ n: string }>("SELECT count(*) AS n FROM items WHERE batch_id = :batchId AND state = 'analysing'", { batchId }))[0].n !== '0');
    await stack.stopWorkers('SIGKILL');
    const atWorkerKill = stored;
    await until('25 files stored', async () => stored >= 25);
    await stack.stopServer('SIGKILL');
    const atServerKill = stored;
    await new Promise((r) => setTimeout(r, 1000)); // uploads fail against a dead port meanwhile, and are retried
    await stack.startServer();
    stack.startWorker();

    const records = await uploads;
    expect(atWorkerKill).toBeLessThan(50);
    expect(atServerKill).toBeLessThan(50);
    const retried = records.filter((r) => r.attempts.length > 1);
    expect(retried.length, 'some uploads failed when the server died and were sent again').toBeGreaterThan(0);

    const status = await waitSettled(editor, batchId, 200_000);
    expect(status.counts).toMatchObject({ total: 50, ready: 50, failed: 0 });

    const items = await stack.query<{ id: string; original_name: string; state: string; sha256: string; seq: number; proposed: string }>(
      `SELECT i.id, i.original_name, i.state, i.seq, o.sha256,
              (SELECT count(*) FROM corrections c WHERE c.item_id = i.id AND c.origin = 'proposed') AS proposed
         FROM items i JOIN originals o ON o.id = i.original_id WHERE i.batch_id = :batchId`,
      { batchId },
    );
    expect(items).toHaveLength(50);
    expect(new Set(items.map((i) => i.seq)).size).toBe(50);
    // The SHA-256 of each uploaded file, computed by the test from the bytes it sent.
    const byHash = new Map(items.map((i) => [i.sha256, i]));
    for (const r of records) {
      expect(byHash.get(r.sha256)?.original_name, `${r.name} (attempts: ${r.attempts.join(', ')})`).toBe(r.name);
    }
    for (const i of items) {
      expect(i.state).toBe('ready');
      expect(Number(i.proposed), `proposed corrections of ${i.original_name}`).toBe(1);
    }

    const originals = await originalsOnDisk(stack, a.id);
    expect(originals).toHaveLength(50);
    for (const o of originals) expect(o.onDisk, o.storageKey).toBe(o.sha256);
    expect(new Set(originals.map((o) => o.sha256))).toEqual(new Set(records.map((r) => r.sha256)));

    // Half-written files of the killed server are cleared by the worker's sweep.
    await until('no temporary files left in storage', async () => temporaryFiles(stack).length === 0, 30_000).catch(() => undefined);
    expect(temporaryFiles(stack)).toEqual([]);
  }, 240_000);
});
