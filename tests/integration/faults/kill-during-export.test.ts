import { execFile } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createBatch, generatedScans, uploadAll, waitSettled } from '../../support/scans.ts';
import { decide, waitExport } from '../export/helpers.ts';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { originalsOnDisk, until } from './helpers.ts';

const run = promisify(execFile);
let stack: IsolatedStack;
let a: TestArchive;
beforeAll(async () => {
  // A short stall limit, so the killed export is picked up again within the test.
  stack = await startIsolatedStack({ label: 'killexport', workers: 1, env: { EXPORT_STALL_SECONDS: '3' } });
  a = await stack.makeArchive('killexport');
});
afterAll(() => stack?.stop());

describe('the worker and the web server killed with kill -9 while an export is running', () => {
  it('finishes the killed export by itself, keeps one row per request, and its bag verifies; originals untouched', async () => {
    const editor = stack.client(a.editor.token);
    const batchId = await createBatch(editor, 'Exported through a crash');
    const files = await generatedScans(16, 9100);
    expect((await uploadAll(editor, batchId, files, 4)).every((r) => r.status === 201)).toBe(true);
    await waitSettled(editor, batchId, 150_000);
    const items = await stack.query<{ id: string }>('SELECT id FROM items WHERE batch_id = :batchId ORDER BY seq', { batchId });
    for (const i of items) await decide(editor, i.id, 'accepted');
    const before = await originalsOnDisk(stack, a.id);

    const asked = await editor.post('/api/exports', { selection: { kind: 'batch', batchId }, includeOriginals: true });
    expect(asked.status).toBe(202);
    const firstUrl = asked.headers.get('location')!;
    await until('the export running', async () => (await editor.get(firstUrl)).body.state === 'running', 60_000);
    await stack.stopWorkers('SIGKILL');
    await stack.stopServer('SIGKILL');
    await stack.startServer();
    stack.startWorker();

    // The killed run's row is still there, answerable, and not ready with a half-written zip.
    const stuck = await editor.get(firstUrl);
    expect(stuck.status).toBe(200);
    expect(stuck.body.downloadUrl).toBeNull();

    const done = await waitExport(editor, firstUrl, 120_000);
    expect(done.state).toBe('ready');
    expect(done.verified).toBe(true);

    // One export row for the one request: resuming did not make another.
    const rows = await stack.query<{ id: string }>('SELECT id FROM exports WHERE archive_id = :id', { id: a.id });
    expect(rows.map((r) => r.id)).toEqual([asked.body.id]);

    // The downloaded zip passes npm run verify-bag (every checksum recomputed).
    const res = await fetch(stack.appUrl + done.downloadUrl, { headers: { authorization: `Bearer ${a.editor.token}` } });
    expect(res.status).toBe(200);
    const zip = path.join(stack.dir, 'export.zip');
    fs.writeFileSync(zip, Buffer.from(await res.arrayBuffer()));
    const verified = await run(process.execPath, ['--import', 'tsx', 'src/scripts/verify-bag.ts', zip]).then(() => 0, (e) => e.code as number);
    expect(verified).toBe(0);

    const after = await originalsOnDisk(stack, a.id);
    expect(after).toEqual(before);
    for (const o of after) expect(o.onDisk).toBe(o.sha256);
  }, 240_000);
});
