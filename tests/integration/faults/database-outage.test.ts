/**
 * PostgreSQL away: routes answer 503 in the JSON error shape with Retry-After and the security
 * headers (not the framework's empty 500), store nothing; and an original an outage left without
 * its row (the file is linked, then the row written) is found by the worker's reconcile, kept and
 * put on the recovered list with a log line, never silently left.
 */
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { createBatch, generatedScans, upload } from '../../support/scans.ts';
import { until } from './helpers.ts';

let stack: IsolatedStack;
let a: TestArchive;
let batchId: string;

/** Every file under the stack's storage folder `sub`. */
function filesUnder(sub: string): string[] {
  const dir = path.join(stack.storageDir, sub);
  if (!fs.existsSync(dir)) return [];
  return (fs.readdirSync(dir, { recursive: true }) as string[]).filter((f) => fs.statSync(path.join(dir, f)).isFile()).map((f) => `${sub}/${f}`).sort();
}

function workerLogs(): string {
  const dir = path.join(stack.dir, 'logs');
  return fs.readdirSync(dir).filter((f) => f.startsWith('worker')).map((f) => fs.readFileSync(path.join(dir, f), 'utf8')).join('\n');
}

beforeAll(async () => {
  stack = await startIsolatedStack({ label: 'dboutage', workers: 0 });
  a = await stack.makeArchive('dboutage');
  batchId = await createBatch(stack.client(a.editor.token), 'Through an outage');
});
afterAll(() => stack?.stop());

describe('a database outage', () => {
  it('answers 503 in the JSON error shape with Retry-After and the security headers, and stores nothing', async () => {
    const editor = stack.client(a.editor.token);
    const [scan] = await generatedScans(1, 9100, { width: 300, height: 200 });
    const originalsBefore = filesUnder('originals');
    stack.stopPostgres();
    try {
      for (const r of [await editor.get(`/api/batches/${batchId}`), await editor.get('/api/me'), await upload(editor, batchId, scan.name, scan.bytes)]) {
        expect(r.status, r.text).toBe(503);
        expect(r.headers.get('content-type')).toMatch(/application\/json/);
        expect(r.body.error.code).toBe('database_unavailable');
        expect(r.body.error.message).toMatch(/database/);
        expect(Number(r.headers.get('retry-after'))).toBeGreaterThan(0);
        expect(r.headers.get('x-content-type-options')).toBe('nosniff');
        expect(r.headers.get('content-security-policy')).toBeTruthy();
        expect(r.headers.get('x-request-id')).toBeTruthy();
      }
      // A page says so too, with the same headers.
      const page = await fetch(`${stack.appUrl}/batches`, { headers: { authorization: `Bearer ${a.editor.token}`, accept: 'text/html' }, redirect: 'manual' });
      expect(page.status).toBe(503);
      expect(page.headers.get('retry-after')).toBeTruthy();
      expect(page.headers.get('x-frame-options')).toBe('DENY');
      expect(await page.text()).toMatch(/database cannot be reached/);
    } finally {
      stack.startPostgres();
    }
    expect(filesUnder('originals')).toEqual(originalsBefore);
    await until('the server answering again', async () => (await editor.get(`/api/batches/${batchId}`)).status === 200, 30_000);
    expect((await editor.get(`/api/batches/${batchId}`)).body.counts.total).toBe(0);
  });

  it('the worker puts an original with no row on the recovered list at start, logs it, keeps it, and takes it off once uploaded again', async () => {
    const editor = stack.client(a.editor.token);
    // What an upload cut short between linking the original and writing its row leaves behind,
    // from before STALE_UPLOAD_MINUTES (a generated scan).
    const [orphanScan] = await generatedScans(1, 9200, { width: 300, height: 200 });
    const sha = createHash('sha256').update(orphanScan.bytes).digest('hex');
    const orphanKey = `originals/${sha.slice(0, 2)}/${sha}.jpg`;
    const orphanPath = path.join(stack.storageDir, orphanKey);
    fs.mkdirSync(path.dirname(orphanPath), { recursive: true });
    fs.writeFileSync(orphanPath, orphanScan.bytes, { mode: 0o444 });
    const anHourAgo = new Date(Date.now() - 3600_000);
    fs.utimesSync(orphanPath, anHourAgo, anHourAgo);
    // And one original with its row, which the reconcile must leave alone.
    const [kept] = await generatedScans(1, 9300, { width: 300, height: 200 });
    expect((await upload(editor, batchId, kept.name, kept.bytes)).status).toBe(201);
    const named = filesUnder('originals').filter((k) => k !== orphanKey);
    for (const k of named) fs.utimesSync(path.join(stack.storageDir, k), anHourAgo, anHourAgo);

    stack.startWorker();
    const noteKey = `recovered/originals/${sha}.json`;
    await until('the orphan original on the recovered list', async () => filesUnder('recovered').includes(noteKey), 60_000, () => filesUnder('recovered').join(', '));
    const note = JSON.parse(fs.readFileSync(path.join(stack.storageDir, noteKey), 'utf8'));
    expect(note).toMatchObject({ storageKey: orphanKey, sha256: sha, bytes: orphanScan.bytes.length });
    expect(filesUnder('recovered')).toEqual([noteKey]);
    await until('the log line naming it', async () => workerLogs().includes(`the original ${orphanKey}`), 10_000);
    // Kept where it was, byte for byte; the other original untouched.
    expect(fs.readFileSync(orphanPath).equals(orphanScan.bytes)).toBe(true);
    for (const k of named) expect(fs.existsSync(path.join(stack.storageDir, k)), k).toBe(true);

    // The archivist uploads the scan again: it gets its row, and the next reconcile (a restarted worker) takes it off the list.
    expect((await upload(editor, batchId, orphanScan.name, orphanScan.bytes)).status).toBe(201);
    await stack.stopWorkers();
    stack.startWorker();
    await until('the note taken off the recovered list', async () => !filesUnder('recovered').includes(noteKey), 60_000);
    expect(fs.readFileSync(orphanPath).equals(orphanScan.bytes)).toBe(true);
  });
});
