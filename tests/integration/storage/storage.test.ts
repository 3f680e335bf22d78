import { execFileSync } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Readable } from 'node:stream';
import { afterAll, describe, expect, it } from 'vitest';
import { StorageFull, TooLarge } from '../../../src/lib/server/errors.ts';
import { checkKey, LocalDiskStore, scanCopyKey, StorageKeyRefused } from '../../../src/lib/server/storage.ts';

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

  it('files a staged upload under the SHA-256 it computed while writing it, and refuses another hash', async () => {
    const body = [Buffer.from('a scan '), Buffer.from('staged in two chunks')];
    const staged = await store.stage('incoming/one.part', Readable.from(body), { maxBytes: 1024 });
    // SHA-256 of the bytes, computed independently with node:crypto's reference implementation.
    const expected = (await import('node:crypto')).createHash('sha256').update(Buffer.concat(body)).digest('hex');
    expect(staged).toEqual({ key: 'incoming/one.part', sha256: expected, bytes: 27 });
    await expect(store.linkContentAddressed('originals', staged.key, '0'.repeat(64))).rejects.toThrow(/checksum/);
    expect(fs.existsSync(path.join(root, 'originals', '00'))).toBe(false);
    const blob = await store.linkContentAddressed('originals', staged.key, expected, { ext: '.jpg' });
    expect(blob).toEqual({ key: `originals/${expected.slice(0, 2)}/${expected}.jpg`, sha256: expected, bytes: 27, created: true });
    expect(fs.readFileSync(path.join(root, blob.key)).equals(Buffer.concat(body))).toBe(true);
    await store.remove(staged.key);
    // a staged file the store did not hash itself (written with put) is hashed from the disk
    await store.put('incoming/two.part', Buffer.concat(body));
    await expect(store.linkContentAddressed('originals', 'incoming/two.part', '1'.repeat(64))).rejects.toThrow(/checksum/);
    expect((await store.linkContentAddressed('originals', 'incoming/two.part', expected, { ext: '.jpg' })).created).toBe(false);
  });

  it('stops a staged upload over the size limit and leaves nothing behind', async () => {
    const big = Readable.from([Buffer.alloc(64 * 1024), Buffer.alloc(64 * 1024)]);
    await expect(store.stage('incoming/big.part', big, { maxBytes: 100 * 1024 })).rejects.toThrow(TooLarge);
    expect(fs.existsSync(path.join(root, 'incoming', 'big.part'))).toBe(false);
  });

  it("removes the kept reduced copies of an original with it, and only that original's", async () => {
    const mine = await store.putContentAddressed('originals', Readable.from([Buffer.from('a scan with copies')]), { ext: '.jpg' });
    const other = await store.putContentAddressed('originals', Readable.from([Buffer.from('another scan')]), { ext: '.jpg' });
    const keys = [scanCopyKey(mine.key, 2048), scanCopyKey(mine.key, 900), scanCopyKey(other.key, 2048)];
    expect(keys[0]).toBe(`cache/scans/${mine.sha256.slice(0, 2)}/${mine.sha256}-2048.jpg`);
    for (const k of keys) await store.put(k, Buffer.from('copy'));
    await store.purgeOriginal(mine.key);
    expect(await store.exists(mine.key)).toBe(false);
    expect([await store.exists(keys[0]), await store.exists(keys[1]), await store.exists(keys[2])]).toEqual([false, false, true]);
    expect(await store.exists(other.key)).toBe(true);
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
