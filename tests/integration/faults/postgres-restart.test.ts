import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createBatch, generatedScans, uploadAll, waitSettled } from '../../support/scans.ts';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { until } from './helpers.ts';

let stack: IsolatedStack;
let a: TestArchive;
beforeAll(async () => {
  // The worker starts once the batch is uploaded (below), so that the restart always falls in the
  // middle of its work, however fast the uploads or the worker are on the machine of the day.
  stack = await startIsolatedStack({ label: 'pgrestart', workers: 0 });
  a = await stack.makeArchive('pgrestart');
});
afterAll(() => stack?.stop());

describe('PostgreSQL restarted while a batch is processing', () => {
  it('the web server and the worker recover by themselves: status answers again and the batch completes', async () => {
    const editor = stack.client(a.editor.token);
    const batchId = await createBatch(editor, 'Through a database restart');
    const files = await generatedScans(24, 8000, { width: 400, height: 300 });
    const replies = await uploadAll(editor, batchId, files, 4);
    expect(replies.map((r) => r.status)).toEqual(files.map(() => 201));
    expect((await editor.get(`/api/batches/${batchId}`)).body.counts).toMatchObject({ queued: 24, ready: 0 });
    const workerLog = path.join(stack.dir, 'logs', `worker-${stack.startWorker()}.log`);
    const serverPid = stack.serverPid();
    const workerPids = stack.workerPids();

    let counts: unknown;
    await until(
      'a few prints ready and others waiting',
      async () => {
        const c = (await editor.get(`/api/batches/${batchId}`)).body.counts;
        counts = c;
        return c.ready >= 2 && c.queued + c.analysing > 4 && c;
      },
      60_000,
      () => JSON.stringify(counts),
    );
    const logBefore = fs.statSync(workerLog).size;
    stack.stopPostgres();
    // While the database is away the server answers (an error), it does not hang or die.
    const during = await editor.get(`/api/batches/${batchId}`);
    expect(during.status).toBeGreaterThanOrEqual(500);
    // The database comes back only once the worker has met its absence (its queue polls fail), so
    // that both processes really have to recover.
    let logSince = '';
    await until(
      'the worker meeting the stopped database',
      async () => {
        logSince = fs.readFileSync(workerLog, 'utf8').slice(logBefore);
        return /ECONNREFUSED|terminating connection|Connection terminated|57P01|shutting down/.test(logSince);
      },
      30_000,
      () => logSince.slice(-500),
    );
    stack.startPostgres();

    // the pool's retries reconnect on the next request
    await until('the batch status answering again', async () => (await editor.get(`/api/batches/${batchId}`)).status === 200, 30_000);

    const status = await waitSettled(editor, batchId, 150_000);
    expect(status.counts).toMatchObject({ total: 24, ready: 24, failed: 0 });
    const proposed = await stack.query<{ n: string }>(
      "SELECT count(*) AS n FROM corrections c JOIN items i ON i.id = c.item_id WHERE i.batch_id = :batchId AND c.origin = 'proposed'",
      { batchId },
    );
    expect(Number(proposed[0].n)).toBe(24);
    // Nobody restarted them: the same server and worker processes did the rest.
    expect(stack.serverPid()).toBe(serverPid);
    expect(stack.workerPids()).toEqual(workerPids);
    // And new work after the restart goes through too.
    const more = await uploadAll(editor, batchId, await generatedScans(1, 8100, { width: 400, height: 300 }), 1);
    expect(more[0].status).toBe(201);
  }, 200_000);
});
