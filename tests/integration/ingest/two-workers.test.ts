import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { createBatch, generatedScans, uploadAll, waitSettled } from '../../support/scans.ts';
import { until } from '../../support/until.ts';

// A stack of its own with exactly two workers, so the count of workers is the test's, not the run's.
let stack: IsolatedStack;
let a: TestArchive;
beforeAll(async () => {
  stack = await startIsolatedStack({ label: 'two-workers', workers: 2 });
  a = await stack.makeArchive('two-workers');
});
afterAll(() => stack?.stop());

const workerLog = (n: number) => path.join(stack.dir, 'logs', `worker-${n}.log`);
const readLog = (n: number) => (fs.existsSync(workerLog(n)) ? fs.readFileSync(workerLog(n), 'utf8') : '');
/** The items a worker's log says it analysed (one line per finished analysis). */
const analysedIn = (n: number) => [...readLog(n).matchAll(/^analyse ([0-9a-f-]{36}): /gm)].map((m) => m[1]);

describe('two workers on one batch at once', () => {
  it('analyse every print exactly once between them, and the batch settles', async () => {
    // a worker is up once it logs its queues; in the whole suite on two cores that can take minutes
    await until('both workers to be working', async () => [1, 2].every((n) => /working on/.test(readLog(n))), 240_000, () =>
      [1, 2].map((n) => `worker ${n}: ${readLog(n).trim().split('\n').slice(-3).join(' | ') || '(no log yet)'}`).join('; '),
    );
    const editor = stack.client(a.editor.token);
    const batchId = await createBatch(editor, 'Two workers');
    const files = await generatedScans(24, 8100);
    const replies = await uploadAll(editor, batchId, files, 4);
    expect(replies.map((r) => r.status)).toEqual(files.map(() => 201));

    const status = await waitSettled(editor, batchId, 240_000);
    expect(status.counts).toMatchObject({ ready: 24, failed: 0, queued: 0, analysing: 0, total: 24 });

    const items = await stack.query<{ id: string; analysis_runs: number; proposed: string }>(
      `SELECT i.id, i.analysis_runs, (SELECT count(*) FROM corrections c WHERE c.item_id = i.id AND c.origin = 'proposed') AS proposed
         FROM items i WHERE i.batch_id = :batchId`,
      { batchId },
    );
    expect(items).toHaveLength(24);
    for (const item of items) {
      // taken into analysis once (our own count of claims), with one proposed correction
      expect(item.analysis_runs, item.id).toBe(1);
      expect(item.proposed, item.id).toBe('1');
    }

    // both took part, and no print was analysed by both (nor twice by one)
    const ids = new Set(items.map((i) => i.id));
    const byWorker = [1, 2].map((n) => analysedIn(n).filter((id) => ids.has(id)));
    expect(byWorker[0].length, 'prints the first worker analysed').toBeGreaterThan(0);
    expect(byWorker[1].length, 'prints the second worker analysed').toBeGreaterThan(0);
    const all = [...byWorker[0], ...byWorker[1]];
    expect(all).toHaveLength(24);
    expect(new Set(all)).toEqual(ids);

    // the batch settles once: its pooling and its e-mail are done, marked on the batch row
    const [batch] = await until(
      'the batch to be marked finished',
      async () => {
        const rows = await stack.query<{ finished_notified_at: Date | null }>('SELECT finished_notified_at FROM batches WHERE id = :batchId', { batchId });
        return rows[0]?.finished_notified_at ? rows : null;
      },
      120_000,
    );
    expect(batch.finished_notified_at).toBeTruthy();
  }, 540_000);
});
