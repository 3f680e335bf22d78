import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Readable } from 'node:stream';
import { afterAll, describe, expect, it } from 'vitest';
import { StorageFull, TooLarge } from '../../../src/lib/server/errors.ts';
import { checkKey, LocalDiskStore, StorageKeyRefused } from '../../../src/lib/server/storage.ts';

const root = fs.mkdtempSync(path.join(os.tmpdir(), 'drawerlight-store-'));
const store = new LocalDiskStore(root);
const tiny = path.join(root, 'tiny');
let mounted = false;

afterAll(() => {
  if (mounted) execFileSync('umount', [tiny]);
  fs.rmSync(root, { recursive: true, force: true });
});

function canMount(): boolean {
  if (process.getuid?.() !== 0) return false;
  fs.mkdirSync(tiny, { recursive: true });
  try {
    execFileSync('mount', ['-t', 'tmpfs', '-o', 'size=256k', 'tmpfs', tiny]);
    mounted = true;
    return true;
  } catch {
    return false;
  }
}

describe('the storage module', () => {
  it('refuses keys that could leave the storage folder', () => {
    for (const bad of ['../etc/passwd', '/etc/passwd', 'originals/../../x', 'a//b', 'a/./b', 'bad\0name', 'C:\\x', '', 'x/..']) {
      expect(() => checkKey(bad), JSON.stringify(bad)).toThrow(StorageKeyRefused);
    }
    expect(checkKey('originals/ab/abcdef.jpg')).toBe('originals/ab/abcdef.jpg');
  });

  it('stores identical bytes once under their SHA-256 and keeps originals read-only', async () => {
    const body = Buffer.from('the same scan, twice');
    const first = await store.putContentAddressed('originals', Readable.from([body]), { ext: '.jpg' });
    const second = await store.putContentAddressed('originals', Readable.from([body]), { ext: '.jpg' });
    // SHA-256 of the bytes, computed independently with node:crypto's reference implementation.
    expect(first.sha256).toBe((await import('node:crypto')).createHash('sha256').update(body).digest('hex'));
    expect(first.created).toBe(true);
    expect(second).toEqual({ ...first, created: false });
    expect(fs.statSync(path.join(root, first.key)).mode & 0o222).toBe(0);
    await expect(store.put(first.key, Buffer.from('overwrite'))).rejects.toThrow(StorageKeyRefused);
    await expect(store.remove(first.key)).rejects.toThrow(StorageKeyRefused);
    expect(fs.readFileSync(path.join(root, first.key)).equals(body)).toBe(true);
  });

  it('stops a file over the size limit and leaves nothing behind', async () => {
    const big = Readable.from([Buffer.alloc(64 * 1024), Buffer.alloc(64 * 1024)]);
    await expect(store.putContentAddressed('originals', big, { maxBytes: 100 * 1024 })).rejects.toThrow(TooLarge);
    expect(fs.readdirSync(path.join(root, 'tmp'))).toEqual([]);
  });

  it.skipIf(!canMount())('answers a full disk with a clear error and no half-stored original', async () => {
    const full = new LocalDiskStore(tiny);
    const chunks = Array.from({ length: 8 }, () => Buffer.alloc(64 * 1024, 7));
    const err = await full.putContentAddressed('originals', Readable.from(chunks)).catch((e) => e);
    expect(err).toBeInstanceOf(StorageFull);
    expect((err as StorageFull).status).toBe(507);
    expect((err as Error).message).toMatch(/disk is full: nothing was stored/);
    expect(fs.existsSync(path.join(tiny, 'originals'))).toBe(false);
    expect(fs.readdirSync(path.join(tiny, 'tmp'))).toEqual([]);
    // Once space is free again, the same store works.
    const ok = await full.putContentAddressed('originals', Readable.from([Buffer.from('small scan')]));
    expect(ok.created).toBe(true);
  });
});
