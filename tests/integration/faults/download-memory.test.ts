/**
 * A slow client downloading a large export zip, or a large original scan: the web server reads the
 * file only as fast as the client takes it, so its memory stays flat (it once grew by the whole zip,
 * 983 MB for 2 GB). The zip here is 400 MB and the original 300 MB of random bytes, written straight
 * into the stack's storage with their rows; the client reads the headers and then nothing for a
 * while, then all of it.
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
  zipSha = writeRandomFile(key, ZIP_MB);
  await stack.sql.query('UPDATE exports SET zip_key = :key, zip_bytes = :bytes, zip_sha256 = :zipSha, finished_at = now() WHERE id = :exportId', {
    replacements: { key, bytes: ZIP_MB << 20, zipSha, exportId },
  });
}, 180_000);
afterAll(() => stack?.stop());

/** Random bytes written to `key` in the stack's storage; returns their SHA-256. */
function writeRandomFile(key: string, mb: number): string {
  const file = path.join(stack.storageDir, key);
  fs.mkdirSync(path.dirname(file), { recursive: true });
  const hash = createHash('sha256');
  const fd = fs.openSync(file, 'w');
  for (let i = 0; i < mb; i++) {
    const chunk = randomBytes(1 << 20);
    hash.update(chunk);
    fs.writeSync(fd, chunk);
  }
  fs.closeSync(fd);
  return hash.digest('hex');
}

/**
 * Downloads `urlPath` as a client that reads the headers, then nothing for 3 s (while the server
 * could have read the whole file several times over), then everything; samples the server's RSS.
 */
async function slowDownload(urlPath: string): Promise<{ status: number; bytes: number; sha: string; before: number; peak: number }> {
  const pid = stack.serverPid()!;
  const before = rssMb(pid);
  let peak = before;
  const received = await new Promise<{ status: number; bytes: number; sha: string }>((resolve, reject) => {
    const req = http.get(new URL(urlPath, stack.appUrl), { headers: { authorization: `Bearer ${a.editor.token}` } }, (res) => {
      res.pause();
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
  return { ...received, before, peak: Math.max(peak, rssMb(pid)) };
}

describe('downloading a large file', () => {
  it('keeps the web server memory flat while a slow client takes an export zip', async () => {
    // Warm up: the route's code and a request through the whole stack before measuring.
    expect((await stack.client(a.editor.token).get(`/api/exports/${exportId}`)).status).toBe(200);
    const got = await slowDownload(`/api/exports/${exportId}/download`);
    expect(got.status).toBe(200);
    expect(got.bytes).toBe(ZIP_MB << 20);
    expect(got.sha).toBe(zipSha);
    // Flat: well under a quarter of the file, whatever the machine (without pacing it grew by most of it).
    expect(got.peak - got.before, `server rss ${got.before.toFixed(0)} -> peak ${got.peak.toFixed(0)} MB`).toBeLessThan(ZIP_MB / 4);
  });

  it('keeps the web server memory flat while a slow client takes a large original scan', async () => {
    const ORIGINAL_MB = 300;
    const [batch] = await stack.query<{ id: string }>("INSERT INTO batches (id, archive_id, name, created_by) VALUES (gen_random_uuid(), :archiveId, 'Large originals', :userId) RETURNING id", {
      archiveId: a.id,
      userId: a.editor.id,
    });
    const key = `originals/${a.id}/large-original.tif`;
    const sha = writeRandomFile(key, ORIGINAL_MB);
    const [original] = await stack.query<{ id: string }>(
      "INSERT INTO originals (id, archive_id, sha256, storage_key, bytes, mime, width, height) VALUES (gen_random_uuid(), :archiveId, :sha, :key, :bytes, 'image/tiff', 12000, 9000) RETURNING id",
      { archiveId: a.id, sha, key, bytes: ORIGINAL_MB << 20 },
    );
    const [item] = await stack.query<{ id: string }>(
      "INSERT INTO items (id, archive_id, batch_id, original_id, seq, original_name, state) VALUES (gen_random_uuid(), :archiveId, :batchId, :originalId, 1, 'large-original.tif', 'failed') RETURNING id",
      { archiveId: a.id, batchId: batch.id, originalId: original.id },
    );
    expect((await stack.client(a.editor.token).get(`/api/items/${item.id}`)).status).toBe(200);
    const got = await slowDownload(`/api/items/${item.id}/original`);
    expect(got.status).toBe(200);
    expect(got.bytes).toBe(ORIGINAL_MB << 20);
    expect(got.sha).toBe(sha);
    expect(got.peak - got.before, `server rss ${got.before.toFixed(0)} -> peak ${got.peak.toFixed(0)} MB`).toBeLessThan(ORIGINAL_MB / 4);
  });
});
