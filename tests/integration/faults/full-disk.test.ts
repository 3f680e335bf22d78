import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AGEING_MODELS, syntheticScan } from '../../../src/lib/demo/synthetic.ts';
import { createBatch, sha256, upload } from '../../support/scans.ts';
import type { TestArchive } from '../../support/fixtures.ts';
import { startIsolatedStack, type IsolatedStack } from '../../support/isolated-stack.ts';
import { temporaryFiles } from './helpers.ts';

const root = process.getuid?.() === 0 ? fs.mkdtempSync(path.join(os.tmpdir(), 'drawerlight-full-disk-')) : '';
const mountPoint = root && path.join(root, 'storage');
let mounted = false;
let stack: IsolatedStack | undefined;
let a: TestArchive;

function mountTinyDisk(): boolean {
  if (!root) return false;
  fs.mkdirSync(mountPoint, { recursive: true });
  try {
    // 8 MB: room for the first scans, then filled up on purpose.
    execFileSync('mount', ['-t', 'tmpfs', '-o', 'size=8m', 'tmpfs', mountPoint]);
    mounted = true;
  } catch {
    mounted = false;
  }
  return mounted;
}
const canMount = mountTinyDisk();

beforeAll(async () => {
  if (!canMount) return;
  // No worker: the test is about the upload, and renders would take space of their own.
  stack = await startIsolatedStack({ label: 'fulldisk', workers: 0, storageDir: mountPoint });
  a = await stack.makeArchive('fulldisk');
});
afterAll(async () => {
  await stack?.stop();
  if (mounted) execFileSync('umount', [mountPoint]);
  if (root) fs.rmSync(root, { recursive: true, force: true });
});

function freeBytes(dir: string): number {
  const s = fs.statfsSync(dir);
  return s.bavail * s.bsize;
}

describe('a full disk during a web upload', () => {
  it.skipIf(!canMount)('answers 507 storage_full in plain words, keeps no half-stored original, stays up, and takes the same upload once space is freed', async () => {
    const editor = stack!.client(a.editor.token);
    const batchId = await createBatch(editor, 'Onto a full disk');
    const small = await syntheticScan({ width: 400, height: 300, seed: 9001, ageing: AGEING_MODELS.darkStorage(0.7), format: 'jpeg', quality: 90 });
    expect((await upload(editor, batchId, 'first.jpg', small)).status).toBe(201);

    // A large scan (PNG of a 1600x1200 scene: a few MB), then a filler file leaving less room than it needs.
    const big = await syntheticScan({ width: 1600, height: 1200, seed: 9002, ageing: AGEING_MODELS.lightFaded(0.6), format: 'png' });
    const filler = path.join(mountPoint, 'filler.bin');
    const leave = Math.floor(big.length / 2);
    fs.writeFileSync(filler, Buffer.alloc(Math.max(0, freeBytes(mountPoint) - leave)));
    expect(freeBytes(mountPoint)).toBeLessThan(big.length);
    const originalsBefore = fs.readdirSync(path.join(mountPoint, 'originals'), { recursive: true }).length;

    const refused = await upload(editor, batchId, 'too-big-for-the-disk.png', big);
    expect(refused.status).toBe(507);
    expect(refused.body.error.code).toBe('storage_full');
    expect(refused.body.error.message).toMatch(/disk is full/i);
    expect(refused.body.error.message).not.toMatch(/ENOSPC|Error:|at /);
    // Nothing half-stored: no row, no file under originals/, nothing staged left behind.
    const rows = await stack!.query<{ n: string }>('SELECT count(*) AS n FROM originals WHERE archive_id = :id', { id: a.id });
    expect(Number(rows[0].n)).toBe(1);
    expect(fs.readdirSync(path.join(mountPoint, 'originals'), { recursive: true })).toHaveLength(originalsBefore);
    expect(temporaryFiles(stack!)).toEqual([]);
    // The server is still up.
    expect((await editor.get(`/api/batches/${batchId}`)).status).toBe(200);

    fs.rmSync(filler);
    const stored = await upload(editor, batchId, 'too-big-for-the-disk.png', big);
    expect(stored.status).toBe(201);
    expect(stored.body.sha256).toBe(sha256(big));
    const key = (await stack!.query<{ storage_key: string }>('SELECT storage_key FROM originals WHERE sha256 = :s', { s: sha256(big) }))[0].storage_key;
    expect(sha256(fs.readFileSync(path.join(mountPoint, key)))).toBe(sha256(big));
  }, 120_000);
});
