/**
 * A slow client downloading a large export zip: the web server reads the file only as fast as
 * the client takes it, so its memory stays flat (it once grew by the whole zip, 983 MB for 2 GB).
 * The zip here is 400 MB of random bytes, written straight into the stack's storage as a finished
 * export; the client reads the headers and then nothing for a while, then all of it.
 */
import { createHash, randomBytes } from 'node:crypto';
import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';

const ZIP_MB = 400;
let stack: IsolatedStack;
let a: TestArchive;
let exportId: string;
let zipSha: string;

function rssMb(pid: number): number {
  const kb = /^VmRSS:\s+(\d+) kB/m.exec(fs.readFileSync(`/proc/${pid}/status`, 'utf8'))?.[1];
  return Number(kb) / 1024;
}

beforeAll(async () => {
  stack = await startIsolatedStack({ label: 'download', workers: 0 });
  a = await stack.makeArchive('download');
  const [row] = await stack.query<{ id: string }>(
    `INSERT INTO exports (id, archive_id, requested_by, selection, options, state, item_ids, progress_done, progress_total, created_at, updated_at)
     VALUES (gen_random_uuid(), :archiveId, :userId, '{"kind":"since_last"}', '{}', 'ready', '[]', 0, 0, now(), now()) RETURNING id`,
    { archiveId: a.id, userId: a.editor.id },
  );
  exportId = row.id;
  const key = `exports/${a.id}/${exportId}.zip`;
  const file = path.join(stack.storageDir, key);
  fs.mkdirSync(path.dirname(file), { recursive: true });
  const hash = createHash('sha256');
  const fd = fs.openSync(file, 'w');
  for (let i = 0; i < ZIP_MB; i++) {
    const chunk = randomBytes(1 << 20);
    hash.update(chunk);
    fs.writeSync(fd, chunk);
  }
  fs.closeSync(fd);
  zipSha = hash.digest('hex');
  await stack.sql.query('UPDATE exports SET zip_key = :key, zip_bytes = :bytes, zip_sha256 = :zipSha, finished_at = now() WHERE id = :exportId', {
    replacements: { key, bytes: ZIP_MB << 20, zipSha, exportId },
  });
}, 180_000);
afterAll(() => stack?.stop());

describe('downloading a large export', () => {
  it('keeps the web server memory flat while a slow client takes the zip', async () => {
    const pid = stack.serverPid()!;
    // Warm up: the route's code and a request through the whole stack before measuring.
    expect((await stack.client(a.editor.token).get(`/api/exports/${exportId}`)).status).toBe(200);
    const before = rssMb(pid);
    const url = new URL(`/api/exports/${exportId}/download`, stack.appUrl);
    let peak = before;
    const received = await new Promise<{ status: number; bytes: number; sha: string }>((resolve, reject) => {
      const req = http.get(url, { headers: { authorization: `Bearer ${a.editor.token}` } }, (res) => {
        res.pause();
        // The client takes nothing while the server could have read the whole file several times over.
        let samples = 0;
        const timer = setInterval(() => {
          peak = Math.max(peak, rssMb(pid));
          if (++samples < 20) return;
          clearInterval(timer);
          const hash = createHash('sha256');
          let bytes = 0;
          res.on('data', (c: Buffer) => {
            hash.update(c);
            bytes += c.length;
          });
          res.on('end', () => resolve({ status: res.statusCode!, bytes, sha: hash.digest('hex') }));
          res.on('error', reject);
          res.resume();
        }, 150);
      });
      req.on('error', reject);
    });
    peak = Math.max(peak, rssMb(pid));
    expect(received.status).toBe(200);
    expect(received.bytes).toBe(ZIP_MB << 20);
    expect(received.sha).toBe(zipSha);
    // Flat: well under a quarter of the file, whatever the machine (without pacing it grew by most of it).
    expect(peak - before, `server rss ${before.toFixed(0)} -> peak ${peak.toFixed(0)} MB`).toBeLessThan(ZIP_MB / 4);
  });
});
