import { execFile } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Readable } from 'node:stream';
import { promisify } from 'node:util';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Batch, closeDb, Item, Original } from '../../../db/index.ts';
import { derivedKeys } from '../../../src/lib/server/processing.ts';
import { storage } from '../../../src/lib/server/storage.ts';
import { dropDatabase } from '../../support/databases.ts';
import { makeArchive, type TestArchive } from '../../support/fixtures.ts';

const run = promisify(execFile);
const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'drawerlight-backup-'));
const dbName = `restore_${randomBytes(4).toString('hex')}`;
const restoreUrl = new URL(process.env.DATABASE_URL!);
restoreUrl.pathname = `/${dbName}`;
const restoreStorage = path.join(tmp, 'restored-storage');
const admin = new pg.Client({ connectionString: process.env.DATABASE_URL });

function script(name: string, args: string[], env: Record<string, string> = {}) {
  return run(process.execPath, ['--import', 'tsx', `src/scripts/${name}.ts`, ...args], { env: { ...process.env, ...env } }).then(
    (r) => ({ code: 0, ...r }),
    (e) => ({ code: e.code as number, stdout: e.stdout as string, stderr: e.stderr as string }),
  );
}

let a: TestArchive;
let originalKey: string;
let bytes: Buffer;
/** An analysed and rendered print's derived files, each kind of them, with their bytes. */
const derived = new Map<string, Buffer>();
let itemId: string;
beforeAll(async () => {
  a = await makeArchive('backup');
  bytes = randomBytes(50_000);
  const stored = await storage().putContentAddressed('originals', Readable.from([bytes]), { ext: '.jpg' });
  originalKey = stored.key;
  const batch = await Batch.create({ archiveId: a.id, name: 'Biscuit tin', createdBy: a.owner.id });
  const original = await Original.create({ archiveId: a.id, sha256: stored.sha256, storageKey: stored.key, bytes: stored.bytes, mime: 'image/jpeg', width: 10, height: 10, createdBy: a.owner.id });
  await Item.create({ archiveId: a.id, batchId: batch.id, originalId: original.id, seq: 1, originalName: 'scan-0001.jpg' });
  // A second print as the worker leaves it: thumbnails, previews and a render, named by its row.
  const other = await storage().putContentAddressed('originals', Readable.from([randomBytes(40_000)]), { ext: '.jpg' });
  const otherOriginal = await Original.create({ archiveId: a.id, sha256: other.sha256, storageKey: other.key, bytes: other.bytes, mime: 'image/jpeg', width: 10, height: 10, createdBy: a.owner.id });
  const item = await Item.create({ archiveId: a.id, batchId: batch.id, originalId: otherOriginal.id, seq: 2, originalName: 'scan-0002.jpg' });
  itemId = item.id;
  const keys = {
    thumb: derivedKeys.originalThumbnail(item.id),
    preview: derivedKeys.originalPreview(item.id),
    render: derivedKeys.render(item.id, 1),
    renderThumb: derivedKeys.renderThumbnail(item.id, 1),
    renderPreview: derivedKeys.renderPreview(item.id, 1),
  };
  for (const key of Object.values(keys)) {
    const b = randomBytes(3000);
    await storage().put(key, b);
    derived.set(key, b);
  }
  await item.update({ state: 'ready', currentVersion: 1, thumbKey: keys.thumb, previewKey: keys.preview, renderKey: keys.render, renderVersion: 1, previewVersion: 1 });
  await admin.connect();
  await admin.query(`CREATE DATABASE "${dbName}"`);
});
afterAll(async () => {
  await closeDb();
  await dropDatabase(admin, dbName);
  await admin.end();
  fs.rmSync(tmp, { recursive: true, force: true });
});

describe('backup and restore', () => {
  it('round-trips the database and the stored files into an empty install', async () => {
    const dir = path.join(tmp, 'backup-1');
    const b = await script('backup', [dir]);
    expect(b.code, b.stderr).toBe(0);
    expect(fs.existsSync(path.join(dir, 'database.dump'))).toBe(true);
    expect(fs.readFileSync(path.join(dir, 'files-sha256.txt'), 'utf8')).toContain(originalKey);

    const r = await script('restore', [dir], { DATABASE_URL: restoreUrl.toString(), STORAGE_DIR: restoreStorage });
    expect(r.code, r.stderr).toBe(0);

    const restored = new pg.Client({ connectionString: restoreUrl.toString() });
    await restored.connect();
    try {
      for (const [table, where] of [
        ['archives', `id = '${a.id}'`],
        ['users', `email LIKE '%.${a.slug}@test.example'`],
        ['memberships', `archive_id = '${a.id}'`],
        ['batches', `archive_id = '${a.id}'`],
        ['originals', `archive_id = '${a.id}'`],
        ['items', `archive_id = '${a.id}'`],
      ]) {
        const q = `SELECT * FROM ${table} WHERE ${where} ORDER BY 1`;
        const [src, dst] = await Promise.all([admin.query(q), restored.query(q)]);
        expect(dst.rows.length, table).toBeGreaterThan(0);
        expect(dst.rows, table).toEqual(src.rows);
      }
      const meta = `SELECT name FROM "SequelizeMeta" ORDER BY name`;
      expect((await restored.query(meta)).rows).toEqual((await admin.query(meta)).rows);
    } finally {
      await restored.end();
    }
    expect(fs.readFileSync(path.join(restoreStorage, originalKey)).equals(bytes)).toBe(true);
    // Every kind of derived file came back too (thumbnails were once left out), byte for byte.
    for (const [key, b] of derived) expect(fs.readFileSync(path.join(restoreStorage, key)).equals(b), key).toBe(true);
  });

  it('refuses to restore over an install that has data, and says why', async () => {
    const r = await script('restore', [path.join(tmp, 'backup-1')], { DATABASE_URL: restoreUrl.toString(), STORAGE_DIR: restoreStorage });
    expect(r.code).not.toBe(0);
    expect(r.stderr).toMatch(/not empty/);
  });

  it('refuses a damaged backup before restoring anything', async () => {
    const dir = path.join(tmp, 'backup-2');
    expect((await script('backup', [dir])).code).toBe(0);
    const copy = path.join(dir, 'files', originalKey);
    const buf = fs.readFileSync(copy);
    buf[100] ^= 0xff;
    fs.chmodSync(copy, 0o644);
    fs.writeFileSync(copy, buf);
    const fresh = path.join(tmp, 'fresh-storage');
    const r = await script('restore', [dir], { DATABASE_URL: restoreUrl.toString().replace(dbName, `${dbName}_none`), STORAGE_DIR: fresh });
    expect(r.code).not.toBe(0);
    expect(r.stderr).toMatch(/damaged/);
    expect(fs.existsSync(path.join(fresh, originalKey))).toBe(false);
  });

  it('does not report success when a file the database names is not in the backup', async () => {
    const dir = path.join(tmp, 'backup-3');
    expect((await script('backup', [dir])).code).toBe(0);
    // A backup that is whole by its own list but lacks a file its database names (as one made
    // before thumbnails were carried): the thumbnail goes from the copy and from the list.
    const gone = derivedKeys.renderThumbnail(itemId, 1);
    fs.rmSync(path.join(dir, 'files', gone));
    const list = path.join(dir, 'files-sha256.txt');
    fs.writeFileSync(list, fs.readFileSync(list, 'utf8').split('\n').filter((l) => !l.endsWith(`  ${gone}`)).join('\n'));
    const second = `${dbName}_partial`;
    await admin.query(`CREATE DATABASE "${second}"`);
    try {
      const fresh = path.join(tmp, 'partial-storage');
      const r = await script('restore', [dir], { DATABASE_URL: restoreUrl.toString().replace(dbName, second), STORAGE_DIR: fresh });
      expect(r.code, r.stdout).not.toBe(0);
      expect(r.stderr).toMatch(/incomplete/);
      expect(r.stderr).toContain(gone);
      expect(r.stdout).not.toMatch(/restored the backup/);
    } finally {
      await dropDatabase(admin, second);
    }
  });

  it('refuses to write into a folder that is not empty', async () => {
    const r = await script('backup', [path.join(tmp, 'backup-1')]);
    expect(r.code).not.toBe(0);
    expect(r.stderr).toMatch(/not empty/);
  });
});
