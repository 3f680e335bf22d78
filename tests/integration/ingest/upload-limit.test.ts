/**
 * A scan over MAX_UPLOAD_MB sent over HTTP to a server of its own (MAX_UPLOAD_MB=2 here): refused
 * with 413 and a message that names the limit, whether the request declares its length (refused
 * before a byte is read) or streams it without one (refused once the limit is passed), and it
 * leaves nothing behind: no item, no original row, no stored or half-written file.
 */
import fs from 'node:fs';
import path from 'node:path';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { createBatch, generatedScans, upload } from '../../support/scans.ts';
import { until } from '../../support/until.ts';

const LIMIT_MB = 2;
let stack: IsolatedStack;
let a: TestArchive;
let big: Buffer;
beforeAll(async () => {
  stack = await startIsolatedStack({ label: 'uploadlimit', workers: 0, env: { MAX_UPLOAD_MB: String(LIMIT_MB) } });
  a = await stack.makeArchive('uploadlimit');
  // A real JPEG over the limit: 2400 x 1600 of noise at quality 95 (noise does not compress).
  const raw = Buffer.alloc(2400 * 1600 * 3);
  for (let i = 0; i < raw.length; i++) raw[i] = (Math.imul(i, 2654435761) >>> 24) & 255;
  big = await sharp(raw, { raw: { width: 2400, height: 1600, channels: 3 } }).jpeg({ quality: 95 }).toBuffer();
}, 180_000);
afterAll(() => stack?.stop());

/** Every file in the stack's storage (originals, staged uploads, anything). */
function storedFiles(): string[] {
  const out: string[] = [];
  const walk = (d: string) => {
    if (!fs.existsSync(d)) return;
    for (const e of fs.readdirSync(d, { withFileTypes: true })) {
      const p = path.join(d, e.name);
      if (e.isDirectory()) walk(p);
      else out.push(path.relative(stack.storageDir, p));
    }
  };
  walk(stack.storageDir);
  return out.filter((f) => !f.startsWith('outbox/')).sort();
}

async function counts(batchId: string) {
  const [r] = await stack.query<{ items: string; originals: string }>(
    'SELECT (SELECT count(*) FROM items WHERE batch_id = :batchId) AS items, (SELECT count(*) FROM originals WHERE archive_id = :archiveId) AS originals',
    { batchId, archiveId: a.id },
  );
  return r;
}

describe(`a scan over MAX_UPLOAD_MB (${LIMIT_MB} MB here)`, () => {
  it('is refused with 413 and a clear message, declared or streamed, and leaves no rows or files', async () => {
    expect(big.length).toBeGreaterThan(LIMIT_MB * 1048576);
    const editor = stack.client(a.editor.token);
    const batchId = await createBatch(editor, 'Too large for this server');
    const before = { rows: await counts(batchId), files: storedFiles() };

    // With its length declared: refused from the header, before the body is read.
    const declared = await upload(editor, batchId, 'huge-scan.jpg', big);
    expect(declared.status).toBe(413);
    const sizeMb = Math.round((big.length / 1048576) * 10) / 10;
    expect(declared.body.error).toEqual({ code: 'too_large', message: `The file is ${sizeMb} MB; the limit for one scan is ${LIMIT_MB} MB.` });

    // Streamed without a length (chunked): refused once more than the limit has arrived.
    let offered = 0;
    const stream = new ReadableStream<Uint8Array>({
      pull(ctl) {
        if (offered >= big.length) return ctl.close();
        const piece = big.subarray(offered, offered + 256 * 1024);
        offered += piece.length;
        ctl.enqueue(piece);
      },
    });
    const streamed = await editor.request('POST', `/api/batches/${batchId}/files`, { body: stream, headers: { 'content-type': 'application/octet-stream', 'x-file-name': 'huge-scan.jpg' } });
    expect(streamed.status).toBe(413);
    expect(streamed.body.error).toEqual({ code: 'too_large', message: `The file is larger than the limit of ${LIMIT_MB} MB.` });

    // Nothing left: no item, no original, and the staged part of the streamed one removed.
    expect(await counts(batchId)).toEqual(before.rows);
    await until('no staged upload left in storage', async () => storedFiles().length === before.files.length, 30_000, () => storedFiles().join(', '));
    expect(storedFiles()).toEqual(before.files);

    // The server still takes a scan under the limit into the same batch.
    const [small] = await generatedScans(1, 9900, { width: 400, height: 300 });
    expect((await upload(editor, batchId, 'small-scan.jpg', small.bytes)).status).toBe(201);
    expect(await counts(batchId)).toEqual({ items: '1', originals: String(Number(before.rows.originals) + 1) });
  }, 120_000);
});
