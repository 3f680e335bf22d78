/**
 * Ingest a folder of scans into a batch, through the same ingest service as the web upload:
 *   npm run ingest -- --archive <slug> --batch <name> [--as <email>] [--watch] <folder>
 *   npm run ingest -- --item <id> [--as <email>] <file>   (a rescan from the negative)
 * With --watch it keeps going as a scanner writes new files, taking each one only once its size
 * has stopped changing. The batch is made when it does not exist yet. Progress goes to stdout,
 * one line per file; refused files are reported with their reason and make the exit status 1;
 * entries that are not taken (hidden files and folders, links, pipes, the system's own files) get
 * one "skipped" line each, saying why.
 */
import { randomUUID } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { readdir, stat } from 'node:fs/promises';
import { basename, join, relative, resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { watch } from 'chokidar';
import { Archive, Batch, Item, Membership, User, closeDb } from '../../db/index.ts';
import { openDatabase } from '../lib/server/database.ts';
import { roleAtLeast } from '../lib/auth/roles.ts';
import { batchCreateSchema } from '../lib/batches/schemas.ts';
import { createBatch } from '../lib/server/batches.ts';
import { AppError } from '../lib/server/errors.ts';
import { ingestScan } from '../lib/server/ingest.ts';
import { stopQueue } from '../lib/server/queue.ts';
import { attachRescanAs } from '../lib/server/rescans.ts';

const USAGE = `Usage: npm run ingest -- --archive <slug> --batch <name> [--as <email>] [--watch] <folder>
       npm run ingest -- --item <id> [--as <email>] <file>

  --archive <slug>      the archive to add the scans to (for example: hartigan)
  --batch <name>        the batch; made when there is none of that name yet
  --as <email>          who is adding them (an editor or owner); default: the archive's first owner
  --source-kind <kind>  for a new batch: box, drawer, album, envelope or other (default box)
  --source-label <text> for a new batch: the label of the box, drawer, album or envelope
  --watch               keep watching the folder for new scans until Ctrl-C
  --item <id>           attach <file>, the scan of a print's negative, to that item: it becomes
                        the current image and the print scan is kept
  --help                show this text`;

const AT_A_TIME = 2;

class UsageError extends Error {}

function options() {
  const { values, positionals } = parseArgs({
    allowPositionals: true,
    options: {
      archive: { type: 'string' },
      batch: { type: 'string' },
      as: { type: 'string' },
      'source-kind': { type: 'string' },
      'source-label': { type: 'string' },
      watch: { type: 'boolean', default: false },
      item: { type: 'string' },
      help: { type: 'boolean', short: 'h', default: false },
    },
  });
  if (values.help) {
    console.log(USAGE);
    process.exit(0);
  }
  if (values.item) {
    if (positionals.length !== 1) throw new UsageError('with --item, give exactly one file: the scan of the negative');
    return { kind: 'rescan' as const, item: values.item, as: values.as, file: resolve(positionals[0]) };
  }
  if (!values.archive) throw new UsageError('--archive <slug> is required');
  if (!values.batch) throw new UsageError('--batch <name> is required');
  if (positionals.length !== 1) throw new UsageError('give exactly one folder');
  return { archive: values.archive, batch: values.batch, as: values.as, sourceKind: values['source-kind'], sourceLabel: values['source-label'], watch: values.watch ?? false, folder: resolve(positionals[0]) };
}

/** The user the scans are added as: --as, or the archive's first owner. */
async function actingUser(archiveId: string, email: string | undefined): Promise<User> {
  if (email) {
    const user = await User.findOne({ where: { email: email.trim().toLowerCase() } });
    const m = user ? await Membership.findOne({ where: { archiveId, userId: user.id } }) : null;
    if (!user || !m) throw new UsageError(`${email} is not a member of this archive`);
    if (!roleAtLeast(m.role, 'editor')) throw new UsageError(`${email} is a ${m.role} here; adding scans needs an editor or owner`);
    return user;
  }
  const owner = await Membership.findOne({ where: { archiveId, role: 'owner' }, order: [['createdAt', 'ASC']] });
  const user = owner ? await User.findByPk(owner.userId) : null;
  if (!user) throw new UsageError('the archive has no owner; name a member with --as <email>');
  return user;
}

/** The kind of a folder entry, as a directory listing or lstat tells it. */
interface EntryKind {
  isFile(): boolean;
  isDirectory(): boolean;
  isSymbolicLink(): boolean;
  isFIFO(): boolean;
  isSocket(): boolean;
}

/**
 * Why an entry is not taken as a scan, in plain words, or null when it is a file to take (or a
 * folder to look into). Links are not followed: a link could lead outside the folder, or round in a loop.
 */
function skipReason(name: string, kind?: EntryKind): string | null {
  const base = basename(name);
  if (/^(Thumbs\.db|desktop\.ini)$/i.test(base)) return "the system's own file, not a scan";
  if (base.startsWith('.')) return !kind ? 'hidden (its name starts with a dot)' : kind.isDirectory() ? 'a hidden folder (nothing in it is taken)' : 'a hidden file';
  if (!kind) return null;
  if (kind.isSymbolicLink()) return 'a link to another place (links are not followed: copy the scan itself into the folder)';
  if (kind.isFIFO()) return 'a pipe (FIFO), not a file';
  if (kind.isSocket()) return 'a socket, not a file';
  if (!kind.isFile() && !kind.isDirectory()) return 'a device, not a file';
  return null;
}

/** Every file to take under `dir`, in natural order; `skipped` hears each entry left out, and why. */
async function listFiles(dir: string, skipped: (path: string, reason: string) => void): Promise<string[]> {
  const out: string[] = [];
  const walk = async (d: string) => {
    const entries = (await readdir(d, { withFileTypes: true })).sort((a, b) => a.name.localeCompare(b.name, undefined, { numeric: true }));
    for (const e of entries) {
      const p = join(d, e.name);
      const reason = skipReason(e.name, e);
      if (reason) skipped(p, reason);
      else if (e.isDirectory()) await walk(p);
      else out.push(p);
    }
  };
  await walk(dir);
  return out;
}

/** --item: the negative's scan becomes the item's current image (src/lib/server/rescans.ts). */
async function attachRescanFromFile(opts: { item: string; as?: string; file: string }): Promise<number> {
  const st = await stat(opts.file).catch(() => null);
  if (!st?.isFile()) throw new UsageError(`${opts.file} is not a file`);
  openDatabase();
  const item = /^[0-9a-f-]{36}$/i.test(opts.item) ? await Item.findByPk(opts.item.toLowerCase()) : null;
  if (!item) throw new UsageError(`there is no item ${opts.item}`);
  const user = await actingUser(item.archiveId, opts.as);
  try {
    const r = await attachRescanAs({ itemId: item.id, userId: user.id, name: basename(opts.file), body: createReadStream(opts.file) });
    console.log(`attached   ${basename(opts.file)} to print #${item.seq} (item ${r.itemId}); the print scan is kept; the worker analyses the rescan now.`);
    return 0;
  } catch (err) {
    if (err instanceof AppError) {
      console.log(`refused    ${basename(opts.file)}: ${err.message}`);
      return 1;
    }
    throw err;
  }
}

async function main(): Promise<number> {
  const parsed = options();
  if (parsed.kind === 'rescan') return attachRescanFromFile(parsed);
  const opts = parsed;
  const st = await stat(opts.folder).catch(() => null);
  if (!st?.isDirectory()) throw new UsageError(`${opts.folder} is not a folder`);
  openDatabase();
  const archive = await Archive.findOne({ where: { slug: opts.archive } });
  if (!archive) throw new UsageError(`there is no archive "${opts.archive}"`);
  const user = await actingUser(archive.id, opts.as);
  let batch = await Batch.findOne({ where: { archiveId: archive.id, name: opts.batch } });
  if (!batch) {
    const input = batchCreateSchema.safeParse({ name: opts.batch, sourceKind: opts.sourceKind ?? 'box', sourceLabel: opts.sourceLabel });
    if (!input.success) throw new UsageError(input.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; '));
    const made = await createBatch(archive.id, user.id, input.data);
    batch = (await Batch.findByPk(made.id))!;
    console.log(`made the batch "${batch.name}" in ${archive.name}`);
  }
  const target = batch;
  const tally = { added: 0, duplicate: 0, refused: 0, skipped: 0 };
  const done = new Set<string>();
  const skipped = new Set<string>();
  const skip = (path: string, reason: string) => {
    if (skipped.has(path)) return;
    skipped.add(path);
    tally.skipped++;
    console.log(`skipped    ${relative(opts.folder, path).split('\\').join('/')}: ${reason}`);
  };
  const skippedText = () => (tally.skipped ? `, ${tally.skipped} skipped (not scans)` : '');
  // one run is one upload: its prints are numbered by file name
  const uploadKey = randomUUID();

  const ingestOne = async (path: string) => {
    if (done.has(path)) return;
    done.add(path);
    const name = relative(opts.folder, path).split('\\').join('/');
    try {
      const r = await ingestScan({ archiveId: archive.id, batchId: target.id, userId: user.id, name, body: createReadStream(path), uploadKey });
      if (r.outcome === 'added') {
        tally.added++;
        console.log(`added      #${r.item.seq} ${name}`);
      } else {
        tally.duplicate++;
        console.log(`already in ${r.existing ? `"${r.existing.batchName}" as #${r.existing.seq} ${r.existing.originalName}` : 'the archive'}: ${name}`);
      }
    } catch (err) {
      if (err instanceof AppError) {
        tally.refused++;
        console.log(`refused    ${name}: ${err.message}`);
      } else throw err;
    }
  };

  const queue: string[] = [];
  let running = 0;
  let idle: (() => void) | null = null;
  const pump = () => {
    while (running < AT_A_TIME && queue.length) {
      const p = queue.shift()!;
      running++;
      ingestOne(p)
        .catch((err) => {
          tally.refused++;
          console.error(`failed     ${relative(opts.folder, p)}: ${(err as Error).message}`);
        })
        .finally(() => {
          running--;
          pump();
          if (running === 0 && queue.length === 0) idle?.();
        });
    }
  };
  const add = (p: string) => {
    if (done.has(p) || queue.includes(p)) return;
    queue.push(p);
    pump();
  };

  if (!opts.watch) {
    for (const p of await listFiles(opts.folder, skip)) add(p);
    if (running > 0) await new Promise<void>((r) => (idle = r));
    console.log(`${tally.added} added, ${tally.duplicate} already in the archive, ${tally.refused} refused${skippedText()}; the worker analyses them now.`);
    return tally.refused > 0 ? 1 : 0;
  }

  console.log(`watching ${opts.folder} for new scans into "${target.name}" (Ctrl-C to stop)`);
  const watcher = watch(opts.folder, {
    ignored: (p, stats) => {
      if (p === opts.folder) return false;
      // asked by name alone first (no stats yet), then with the entry's lstat
      const reason = skipReason(p, stats);
      if (reason) skip(p, reason);
      return reason !== null;
    },
    followSymlinks: false,
    // A scanner writes a file over a few seconds: take it once its size has held for 2 s.
    awaitWriteFinish: { stabilityThreshold: 2000, pollInterval: 250 },
    alwaysStat: false,
  });
  watcher.on('add', add);
  watcher.on('error', (err) => console.error(`watch error: ${(err as Error).message}`));
  await new Promise<void>((resolveStop) => {
    const stop = () => resolveStop();
    process.once('SIGINT', stop);
    process.once('SIGTERM', stop);
  });
  await watcher.close();
  if (running > 0) await new Promise<void>((r) => (idle = r));
  console.log(`stopped: ${tally.added} added, ${tally.duplicate} already in the archive, ${tally.refused} refused${skippedText()}.`);
  return 0;
}

try {
  process.exitCode = await main();
} catch (err) {
  if (err instanceof UsageError) {
    console.error(`ingest: ${err.message}\n\n${USAGE}`);
    process.exitCode = 2;
  } else {
    console.error(err);
    process.exitCode = 1;
  }
} finally {
  await stopQueue().catch(() => undefined);
  await closeDb();
}
