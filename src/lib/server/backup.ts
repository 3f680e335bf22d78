import { execFile } from 'node:child_process';
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import fs from 'node:fs/promises';
import path from 'node:path';
import { promisify } from 'node:util';
import { QueryTypes } from 'sequelize';
import { db } from '../../../db/index.ts';
import { config } from './config.ts';
import { derivedKeys } from './processing.ts';
import { STORED_FOLDERS } from './storage.ts';

const run = promisify(execFile);

/**
 * Folders of storage/ that a backup carries: those the storage module lists as carried, and any
 * folder it does not list at all (a kind of file added without a word there is carried rather than lost).
 */
async function carriedFolders(storageDir: string): Promise<string[]> {
  const present = (await fs.readdir(storageDir, { withFileTypes: true }).catch(() => [])).filter((e) => e.isDirectory() && !e.name.startsWith('.')).map((e) => e.name);
  const listed = STORED_FOLDERS as Record<string, 'carried' | 'left'>;
  return present.filter((name) => listed[name] !== 'left').sort();
}

/**
 * Every storage key the database names: originals, each item's small copies and render (the
 * thumbnail and preview of the correction it shows included), the small copies of backs, finished exports' zips.
 */
export async function keysNamedByDatabase(): Promise<string[]> {
  const rows = await db().query<{ id: string; thumb_key: string | null; preview_key: string | null; render_key: string | null; preview_version: number | null }>(
    'SELECT id, thumb_key, preview_key, render_key, preview_version FROM items',
    { type: QueryTypes.SELECT },
  );
  const keys = new Set<string>();
  for (const r of rows) {
    for (const k of [r.thumb_key, r.preview_key, r.render_key]) if (k) keys.add(k);
    if (r.preview_version) {
      keys.add(derivedKeys.renderThumbnail(r.id, r.preview_version));
      keys.add(derivedKeys.renderPreview(r.id, r.preview_version));
    }
  }
  const others = await db().query<{ key: string }>(
    `SELECT storage_key AS key FROM originals UNION ALL SELECT zip_key AS key FROM exports WHERE state = 'ready' AND zip_key IS NOT NULL
     UNION ALL SELECT thumb_key AS key FROM print_backs WHERE thumb_key IS NOT NULL UNION ALL SELECT preview_key AS key FROM print_backs WHERE preview_key IS NOT NULL`,
    { type: QueryTypes.SELECT },
  );
  for (const r of others) keys.add(r.key);
  return [...keys].sort();
}
export const BACKUP_FORMAT = 'drawerlight-backup/1';

async function pgBin(tool: 'pg_dump' | 'pg_restore'): Promise<string> {
  const root = '/usr/lib/postgresql';
  const versions = (await fs.readdir(root).catch(() => [])).filter((v) => /^\d+$/.test(v)).sort((a, b) => Number(a) - Number(b));
  if (!versions.length) throw new Error('PostgreSQL client tools are not installed (apt-get install postgresql).');
  return path.join(root, versions.at(-1)!, 'bin', tool);
}

async function sha256(file: string): Promise<string> {
  const h = createHash('sha256');
  for await (const chunk of createReadStream(file)) h.update(chunk);
  return h.digest('hex');
}

async function walk(dir: string): Promise<string[]> {
  const out: string[] = [];
  for (const e of await fs.readdir(dir, { withFileTypes: true }).catch(() => [])) {
    const p = path.join(dir, e.name);
    if (e.isDirectory()) out.push(...(await walk(p)));
    else if (e.isFile()) out.push(p);
  }
  return out;
}

export interface BackupSummary {
  format: string;
  createdAt: string;
  database: string;
  databaseSha256: string;
  files: number;
  bytes: number;
}

/**
 * Writes a backup into `dir`: a pg_dump of the database (one consistent snapshot) and then a copy
 * of the stored files with their SHA-256. Files are written once and never changed, so every file
 * the snapshot refers to already exists when the copy starts.
 */
export async function backup(dir: string): Promise<BackupSummary> {
  const c = config();
  await fs.mkdir(dir, { recursive: true });
  if ((await fs.readdir(dir)).length) throw new Error(`The backup folder ${dir} is not empty: choose a new one.`);
  await run(await pgBin('pg_dump'), ['--format=custom', '--no-owner', '--no-privileges', `--file=${path.join(dir, 'database.dump')}`, c.databaseUrl]);
  const lines: string[] = [];
  let bytes = 0;
  for (const folder of await carriedFolders(c.storageDir)) {
    for (const file of await walk(path.join(c.storageDir, folder))) {
      const rel = path.relative(c.storageDir, file).split(path.sep).join('/');
      const target = path.join(dir, 'files', rel);
      await fs.mkdir(path.dirname(target), { recursive: true });
      await fs.copyFile(file, target);
      const st = await fs.stat(target);
      bytes += st.size;
      lines.push(`${await sha256(target)}  ${rel}`);
    }
  }
  await fs.writeFile(path.join(dir, 'files-sha256.txt'), lines.join('\n') + (lines.length ? '\n' : ''));
  const summary: BackupSummary = {
    format: BACKUP_FORMAT,
    createdAt: new Date().toISOString(),
    database: 'database.dump',
    databaseSha256: await sha256(path.join(dir, 'database.dump')),
    files: lines.length,
    bytes,
  };
  await fs.writeFile(path.join(dir, 'backup.json'), JSON.stringify(summary, null, 2) + '\n');
  return summary;
}

/**
 * Restores a backup into an empty install: refuses a database that already has tables or a
 * storage folder that already holds originals, checks every file's SHA-256 before copying it,
 * and at the end checks that every file the restored database names is there.
 * @throws when a file the database names is missing after the copy (the restore is incomplete)
 */
export async function restore(dir: string, opts: { tablesInDatabase: () => Promise<number> }): Promise<BackupSummary> {
  const c = config();
  const summary = JSON.parse(await fs.readFile(path.join(dir, 'backup.json'), 'utf8').catch(() => {
    throw new Error(`${dir} is not a Drawerlight backup (no backup.json).`);
  })) as BackupSummary;
  if (summary.format !== BACKUP_FORMAT) throw new Error(`Unknown backup format ${summary.format}.`);

  const listed = (await fs.readFile(path.join(dir, 'files-sha256.txt'), 'utf8')).split('\n').filter(Boolean);
  const bad: string[] = [];
  if ((await sha256(path.join(dir, summary.database)).catch(() => 'missing')) !== summary.databaseSha256) bad.push(summary.database);
  for (const line of listed) {
    const [hex, rel] = [line.slice(0, 64), line.slice(66)];
    const src = path.join(dir, 'files', rel);
    if ((await sha256(src).catch(() => 'missing')) !== hex) bad.push(rel);
  }
  if (bad.length) throw new Error(`The backup is damaged: ${bad.length} file(s) missing or changed, e.g. ${bad.slice(0, 3).join(', ')}. Nothing was restored.`);

  if ((await opts.tablesInDatabase()) > 0) throw new Error('The database is not empty: restore only into a new, empty install.');
  if ((await walk(path.join(c.storageDir, 'originals'))).length) throw new Error(`${c.storageDir}/originals is not empty: restore only into a new, empty install.`);

  await run(await pgBin('pg_restore'), ['--no-owner', '--no-privileges', '--exit-on-error', `--dbname=${c.databaseUrl}`, path.join(dir, summary.database)]);
  for (const line of listed) {
    const rel = line.slice(66);
    const target = path.join(c.storageDir, rel);
    await fs.mkdir(path.dirname(target), { recursive: true });
    await fs.copyFile(path.join(dir, 'files', rel), target);
    if (rel.startsWith('originals/')) await fs.chmod(target, 0o444);
  }
  const missing: string[] = [];
  for (const key of await keysNamedByDatabase()) {
    if (!(await fs.stat(path.join(c.storageDir, key)).then((st) => st.isFile(), () => false))) missing.push(key);
  }
  if (missing.length) {
    throw new Error(`The restore is incomplete: ${missing.length} file(s) the database names are not in the backup, e.g. ${missing.slice(0, 3).join(', ')}. Restore from another backup.`);
  }
  return summary;
}
