import { createHash, randomUUID } from 'node:crypto';
import { createReadStream, createWriteStream } from 'node:fs';
import fs from 'node:fs/promises';
import path from 'node:path';
import { Readable, Transform } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { config } from './config.ts';
import { AppError, StorageFull, TooLarge } from './errors.ts';

/** What a content-addressed write produced. */
export interface StoredBlob {
  key: string;
  sha256: string;
  bytes: number;
  /** False when identical bytes were already stored under that key. */
  created: boolean;
}

/**
 * Where Drawerlight keeps files. Keys are relative, slash-separated names (`originals/ab/abcd…`);
 * the database stores keys, never paths. Originals are write-once. A local-disk store exists
 * now; an S3-compatible store can implement the same interface later.
 */
export interface BlobStore {
  /** Streams into the store under `<prefix>/<sha[0..2]>/<sha256><ext>`, hashing while writing; refuses more than maxBytes. */
  putContentAddressed(prefix: string, body: Readable | AsyncIterable<Uint8Array>, opts?: { maxBytes?: number; ext?: string }): Promise<StoredBlob>;
  /**
   * Files a staged file of this store (written with {@link put} under a key outside the write-once
   * prefixes) under `<prefix>/<sha[0..2]>/<sha256><ext>` without copying it: the bytes are hashed
   * again and must match `sha256`, made durable, then linked; the staged key is left for the
   * caller to remove. Same result and rules as {@link putContentAddressed}.
   */
  linkContentAddressed(prefix: string, stagedKey: string, sha256: string, opts?: { ext?: string }): Promise<StoredBlob>;
  /**
   * Stages a body under `stagedKey` (outside the write-once prefixes), hashing it while it is
   * written and making it durable, refusing more than maxBytes. The store remembers the hash it
   * computed, so {@link linkContentAddressed} of that key files it without reading it again.
   */
  stage(stagedKey: string, body: Readable | AsyncIterable<Uint8Array>, opts?: { maxBytes?: number }): Promise<{ key: string; sha256: string; bytes: number }>;
  /** Writes a derived file (render, preview, export) atomically; an existing one is replaced. */
  put(key: string, body: Buffer | Readable | AsyncIterable<Uint8Array>): Promise<{ key: string; bytes: number }>;
  read(key: string, range?: { start: number; end?: number }): Readable;
  readBuffer(key: string): Promise<Buffer>;
  stat(key: string): Promise<{ bytes: number; modified: Date } | null>;
  exists(key: string): Promise<boolean>;
  /** Removes a derived file; refuses originals. */
  remove(key: string): Promise<void>;
  /** Deletes an original scan and the copies of it kept in `cache/`: only the purge of prints removed 30 days before does (removal.ts). */
  purgeOriginal(key: string): Promise<void>;
  list(prefix: string): Promise<string[]>;
  /** A local file path for libraries that want one (sharp, pg_dump); a remote store would download to a temp file. */
  localPath(key: string): Promise<string>;
}

export class StorageKeyRefused extends AppError {
  constructor(key: string) {
    super(400, 'bad_storage_key', `Refused storage key ${JSON.stringify(key).slice(0, 80)}: keys must stay inside storage.`);
  }
}

/**
 * Every top-level folder of the store and whether a backup carries it: the one list of the kinds
 * of stored files (src/lib/server/backup.ts reads it). A new kind of stored file is added here.
 * Derived files (renders, previews, thumbnails) are carried too: a restored archive shows its
 * prints at once, without waiting for every image to be made again.
 */
export const STORED_FOLDERS = {
  /** Uploaded scans, write-once, under their SHA-256. */
  originals: 'carried',
  /** Full-size corrected JPEGs. */
  renders: 'carried',
  /** Review-size copies of the original and of each correction. */
  previews: 'carried',
  /** Small copies shown in lists and grids. */
  thumbnails: 'carried',
  /** Finished export zips. */
  exports: 'carried',
  /** Notes on originals no database row names (src/lib/server/reconcile.ts). */
  recovered: 'carried',
  /** Uploads being received and half-written files: swept away after a crash, never worth keeping. */
  incoming: 'left',
  tmp: 'left',
  /**
   * Copies made on demand and kept to be served again (the review's reduced whole scans, see
   * {@link scanCopyKey}): made again when missing, so a backup leaves them.
   */
  cache: 'left',
  /** The development mail fake's caught mail and the processes' logs. */
  outbox: 'left',
  logs: 'left',
  /** The development database's own cluster folder (`npm start`): the backup holds a pg_dump instead. */
  postgres: 'left',
} as const satisfies Record<string, 'carried' | 'left'>;

/**
 * Where a copy of an original scan reduced to `side` pixels is kept: beside the other copies of
 * the same bytes, under the original's SHA-256 (originals are write-once, so a copy never goes
 * stale), and removed with the original by {@link BlobStore.purgeOriginal}.
 */
export function scanCopyKey(originalKey: string, side: number): string {
  const name = path.posix.basename(checkKey(originalKey)).replace(/\.[^.]*$/, '');
  return checkKey(`cache/scans/${name.slice(0, 2)}/${name}-${Math.round(side)}.jpg`);
}

const KEY_PATTERN = /^[A-Za-z0-9][A-Za-z0-9._-]*(\/[A-Za-z0-9][A-Za-z0-9._-]*)*$/;
const WRITE_ONCE_PREFIXES = ['originals/'];

/** Refuses keys that could escape the storage root or name something odd. */
export function checkKey(key: string): string {
  if (typeof key !== 'string' || key.length > 400 || !KEY_PATTERN.test(key) || key.split('/').some((p) => p === '..' || p === '.')) {
    throw new StorageKeyRefused(String(key));
  }
  return key;
}

function isNoSpace(err: unknown): boolean {
  const code = (err as NodeJS.ErrnoException)?.code;
  return code === 'ENOSPC' || code === 'EDQUOT';
}

class ByteLimit extends Transform {
  bytes = 0;
  readonly hash = createHash('sha256');
  constructor(private readonly maxBytes: number) {
    super();
  }
  override _transform(chunk: Buffer, _enc: BufferEncoding, cb: (err?: Error | null, data?: Buffer) => void) {
    this.bytes += chunk.length;
    if (this.bytes > this.maxBytes) {
      cb(new TooLarge(`The file is larger than the limit of ${Math.round(this.maxBytes / 1024 / 1024)} MB.`));
      return;
    }
    this.hash.update(chunk);
    cb(null, chunk);
  }
}

/** The local-disk implementation, rooted at STORAGE_DIR. */
export class LocalDiskStore implements BlobStore {
  /** Hashes this store computed while staging a file, by staged key (see {@link stage}). */
  private readonly stagedHashes = new Map<string, { sha256: string; bytes: number }>();

  constructor(readonly root: string) {}

  private abs(key: string): string {
    const p = path.resolve(this.root, checkKey(key));
    if (!p.startsWith(path.resolve(this.root) + path.sep)) throw new StorageKeyRefused(key);
    return p;
  }

  private async tempFile(): Promise<string> {
    const dir = path.join(this.root, 'tmp');
    await fs.mkdir(dir, { recursive: true });
    return path.join(dir, `${randomUUID()}.part`);
  }

  async putContentAddressed(prefix: string, body: Readable | AsyncIterable<Uint8Array>, opts: { maxBytes?: number; ext?: string } = {}): Promise<StoredBlob> {
    const tmp = await this.tempFile();
    const meter = new ByteLimit(opts.maxBytes ?? Number.MAX_SAFE_INTEGER);
    try {
      const out = createWriteStream(tmp, { flags: 'wx', mode: 0o600 });
      await pipeline(body instanceof Readable ? body : Readable.from(body), meter, out);
      const handle = await fs.open(tmp, 'r');
      await handle.sync();
      await handle.close();
    } catch (err) {
      await fs.rm(tmp, { force: true });
      if (isNoSpace(err)) throw new StorageFull();
      throw err;
    }
    const sha256 = meter.hash.digest('hex');
    const key = checkKey(`${prefix}/${sha256.slice(0, 2)}/${sha256}${opts.ext ?? ''}`);
    const final = this.abs(key);
    await fs.mkdir(path.dirname(final), { recursive: true });
    let created = true;
    try {
      // link() refuses to replace an existing file, which makes the write-once rule atomic.
      await fs.link(tmp, final);
      if (WRITE_ONCE_PREFIXES.some((p) => key.startsWith(p))) await fs.chmod(final, 0o444);
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EEXIST') {
        await fs.rm(tmp, { force: true });
        if (isNoSpace(err)) throw new StorageFull();
        throw err;
      }
      created = false;
    }
    await fs.rm(tmp, { force: true });
    return { key, sha256, bytes: meter.bytes, created };
  }

  async stage(stagedKey: string, body: Readable | AsyncIterable<Uint8Array>, opts: { maxBytes?: number } = {}): Promise<{ key: string; sha256: string; bytes: number }> {
    if (WRITE_ONCE_PREFIXES.some((p) => stagedKey.startsWith(p))) throw new StorageKeyRefused(stagedKey);
    const staged = this.abs(stagedKey);
    const meter = new ByteLimit(opts.maxBytes ?? Number.MAX_SAFE_INTEGER);
    try {
      await fs.mkdir(path.dirname(staged), { recursive: true });
      await pipeline(body instanceof Readable ? body : Readable.from(body), meter, createWriteStream(staged, { flags: 'wx', mode: 0o600 }));
      const handle = await fs.open(staged, 'r');
      try {
        await handle.sync();
      } finally {
        await handle.close();
      }
    } catch (err) {
      await fs.rm(staged, { force: true });
      if (isNoSpace(err)) throw new StorageFull();
      throw err;
    }
    const found = { sha256: meter.hash.digest('hex'), bytes: meter.bytes };
    this.stagedHashes.set(stagedKey, found);
    return { key: stagedKey, ...found };
  }

  async linkContentAddressed(prefix: string, stagedKey: string, sha256: string, opts: { ext?: string } = {}): Promise<StoredBlob> {
    if (WRITE_ONCE_PREFIXES.some((p) => stagedKey.startsWith(p))) throw new StorageKeyRefused(stagedKey);
    const staged = this.abs(stagedKey);
    const key = checkKey(`${prefix}/${sha256.slice(0, 2)}/${sha256}${opts.ext ?? ''}`);
    const final = this.abs(key);
    // Hash what is on disk, not what the caller says: the key must name these very bytes. A file
    // this store staged was hashed as it was written (and made durable): it is not read again.
    let bytes: number;
    const known = this.stagedHashes.get(stagedKey);
    if (known) {
      if (known.sha256 !== sha256) throw new Error(`checksum of the staged file is ${known.sha256}, not ${sha256}`);
      bytes = known.bytes;
    } else {
      const handle = await fs.open(staged, 'r');
      bytes = 0;
      try {
        const hash = createHash('sha256');
        for await (const chunk of handle.createReadStream({ autoClose: false })) {
          hash.update(chunk as Buffer);
          bytes += (chunk as Buffer).length;
        }
        const found = hash.digest('hex');
        if (found !== sha256) throw new Error(`checksum of the staged file is ${found}, not ${sha256}`);
        await handle.sync();
      } finally {
        await handle.close();
      }
    }
    await fs.mkdir(path.dirname(final), { recursive: true });
    let created = true;
    try {
      // link() refuses to replace an existing file, which makes the write-once rule atomic.
      await fs.link(staged, final);
      if (WRITE_ONCE_PREFIXES.some((p) => key.startsWith(p))) await fs.chmod(final, 0o444);
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EEXIST') {
        if (isNoSpace(err)) throw new StorageFull();
        throw err;
      }
      created = false;
    }
    return { key, sha256, bytes, created };
  }

  async put(key: string, body: Buffer | Readable | AsyncIterable<Uint8Array>): Promise<{ key: string; bytes: number }> {
    const final = this.abs(key);
    if (WRITE_ONCE_PREFIXES.some((p) => key.startsWith(p))) throw new StorageKeyRefused(key);
    this.stagedHashes.delete(key);
    const tmp = await this.tempFile();
    try {
      if (Buffer.isBuffer(body)) await fs.writeFile(tmp, body, { flag: 'wx' });
      else await pipeline(body instanceof Readable ? body : Readable.from(body), createWriteStream(tmp, { flags: 'wx' }));
      await fs.mkdir(path.dirname(final), { recursive: true });
      await fs.rename(tmp, final);
    } catch (err) {
      await fs.rm(tmp, { force: true });
      if (isNoSpace(err)) throw new StorageFull();
      throw err;
    }
    const st = await fs.stat(final);
    return { key, bytes: st.size };
  }

  read(key: string, range?: { start: number; end?: number }): Readable {
    return createReadStream(this.abs(key), range ? { start: range.start, end: range.end } : undefined);
  }

  readBuffer(key: string): Promise<Buffer> {
    return fs.readFile(this.abs(key));
  }

  async stat(key: string) {
    try {
      const st = await fs.stat(this.abs(key));
      return st.isFile() ? { bytes: st.size, modified: st.mtime } : null;
    } catch {
      return null;
    }
  }

  async exists(key: string): Promise<boolean> {
    return (await this.stat(key)) !== null;
  }

  async remove(key: string): Promise<void> {
    if (WRITE_ONCE_PREFIXES.some((p) => key.startsWith(p))) throw new StorageKeyRefused(key);
    this.stagedHashes.delete(key);
    await fs.rm(this.abs(key), { force: true });
  }

  async purgeOriginal(key: string): Promise<void> {
    if (!checkKey(key).startsWith('originals/')) throw new StorageKeyRefused(key);
    await fs.rm(this.abs(key), { force: true });
    const copyPrefix = scanCopyKey(key, 0).replace(/0\.jpg$/, '');
    const folder = this.abs(path.posix.dirname(copyPrefix));
    const names = await fs.readdir(folder).catch(() => [] as string[]);
    const own = path.posix.basename(copyPrefix);
    for (const name of names) if (name.startsWith(own)) await fs.rm(path.join(folder, name), { force: true });
  }

  async list(prefix: string): Promise<string[]> {
    const base = this.abs(prefix);
    const out: string[] = [];
    const walk = async (dir: string) => {
      let entries;
      try {
        entries = await fs.readdir(dir, { withFileTypes: true });
      } catch {
        return;
      }
      for (const e of entries) {
        const p = path.join(dir, e.name);
        if (e.isDirectory()) await walk(p);
        else if (e.isFile()) out.push(path.relative(this.root, p).split(path.sep).join('/'));
      }
    };
    await walk(base);
    return out.sort();
  }

  async localPath(key: string): Promise<string> {
    return this.abs(key);
  }
}

let store: BlobStore | undefined;
/** The configured store. */
export function storage(): BlobStore {
  store ??= new LocalDiskStore(config().storageDir);
  return store;
}
