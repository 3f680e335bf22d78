/**
 * BagIt bags on disk: a zip writer that streams payload files into a zip (never holding the
 * zip in memory) while hashing them, and readers over a zip or a folder for the fixity check in
 * src/lib/archive/bagit.ts. RFC 8493 §4: a serialised bag has one top-level folder, the bag.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import fs from 'node:fs/promises';
import path from 'node:path';
import { PassThrough, Readable, type Writable } from 'node:stream';
import { finished } from 'node:stream/promises';
import archiver from 'archiver';
import yauzl from 'yauzl';
import {
  BAG_INFO, BAGIT, BAGIT_TXT, MANIFEST, TAG_MANIFEST, baggingDate, formatBagInfo, formatManifest, payloadOxum,
  type BagFile, type BagSource, type ManifestEntry,
} from '../archive/bagit.ts';

/** Writes one bag as a zip to `out`, file by file; call {@link finish} to add the tag files. */
export class ZipBagWriter {
  private readonly zip = archiver('zip', { zlib: { level: 6 }, forceZip64: false });
  private readonly payload: ManifestEntry[] = [];
  private octets = 0;
  private readonly done: Promise<void>;
  private failure: Error | null = null;

  constructor(
    /** The bag's base folder inside the zip (RFC 8493 §4: the serialisation holds one bag). */
    readonly base: string,
    out: Writable,
  ) {
    this.zip.on('warning', (err) => {
      this.failure ??= err;
    });
    this.zip.on('error', (err) => {
      this.failure ??= err;
    });
    this.zip.pipe(out);
    this.done = finished(out);
  }

  private entryDone(name: string): Promise<void> {
    return new Promise((resolve, reject) => {
      const onEntry = (e: archiver.EntryData) => {
        if (e.name !== name) return;
        cleanup();
        resolve();
      };
      const onError = (err: Error) => {
        cleanup();
        reject(err);
      };
      const cleanup = () => {
        this.zip.off('entry', onEntry);
        this.zip.off('error', onError);
      };
      this.zip.on('entry', onEntry);
      this.zip.on('error', onError);
    });
  }

  /**
   * Adds one payload file (a path under data/, slash-separated) and waits until the zip has
   * taken all of it, so only one file is in flight at a time. Already-compressed images are stored, not deflated.
   */
  async addPayload(relPath: string, body: Buffer | Readable, opts: { store?: boolean; date?: Date } = {}): Promise<{ sha256: string; bytes: number }> {
    if (this.failure) throw this.failure;
    const bagPath = `data/${relPath}`;
    const name = `${this.base}/${bagPath}`;
    const hash = createHash('sha256');
    let bytes = 0;
    let source: Buffer | Readable;
    if (Buffer.isBuffer(body)) {
      hash.update(body);
      bytes = body.length;
      source = body;
    } else {
      const tap = new PassThrough();
      tap.on('data', (chunk: Buffer) => {
        hash.update(chunk);
        bytes += chunk.length;
      });
      body.on('error', (err) => tap.destroy(err));
      source = body.pipe(tap);
    }
    const wait = this.entryDone(name);
    this.zip.append(source, { name, store: opts.store ?? false, date: opts.date ?? new Date() });
    await wait;
    const sha256 = hash.digest('hex');
    this.payload.push({ path: bagPath, sha256 });
    this.octets += bytes;
    return { sha256, bytes };
  }

  /** Payload so far: total octets and file count. */
  get oxum(): { octets: number; count: number } {
    return { octets: this.octets, count: this.payload.length };
  }

  /** Writes bagit.txt, the manifest, bag-info.txt and the tag manifest, and closes the zip. */
  async finish(info: [string, string][], now = new Date()): Promise<void> {
    if (this.failure) throw this.failure;
    const tags: [string, string][] = [
      [BAGIT, BAGIT_TXT],
      [MANIFEST, formatManifest(this.payload)],
      [BAG_INFO, formatBagInfo([...info, ['Bagging-Date', baggingDate(now)], ['Payload-Oxum', payloadOxum(this.octets, this.payload.length)]])],
    ];
    const tagEntries: ManifestEntry[] = [];
    for (const [p, text] of tags) {
      const buf = Buffer.from(text, 'utf8');
      tagEntries.push({ path: p, sha256: createHash('sha256').update(buf).digest('hex') });
      this.zip.append(buf, { name: `${this.base}/${p}`, date: now });
    }
    this.zip.append(Buffer.from(formatManifest(tagEntries), 'utf8'), { name: `${this.base}/${TAG_MANIFEST}`, date: now });
    await this.zip.finalize();
    await this.done;
    if (this.failure) throw this.failure;
  }

  /** Stops writing after a failure; the partial output is the caller's to remove. */
  abort(): void {
    this.zip.abort();
  }
}

function sha256Stream(stream: Readable): Promise<string> {
  return new Promise((resolve, reject) => {
    const hash = createHash('sha256');
    stream.on('data', (c: Buffer) => hash.update(c));
    stream.on('end', () => resolve(hash.digest('hex')));
    stream.on('error', reject);
  });
}

/** A bag in a folder on disk (the folder holding bagit.txt). */
export async function folderBagSource(dir: string): Promise<BagSource> {
  const root = path.resolve(dir);
  return {
    async list() {
      const out: BagFile[] = [];
      const walk = async (d: string) => {
        for (const e of await fs.readdir(d, { withFileTypes: true })) {
          const p = path.join(d, e.name);
          if (e.isDirectory()) await walk(p);
          else if (e.isFile()) out.push({ path: path.relative(root, p).split(path.sep).join('/'), bytes: (await fs.stat(p)).size });
        }
      };
      await walk(root);
      return out;
    },
    readText: (p) => fs.readFile(path.join(root, p), 'utf8'),
    sha256: (p) => sha256Stream(createReadStream(path.join(root, p))),
  };
}

function openZip(file: string): Promise<yauzl.ZipFile> {
  return new Promise((resolve, reject) => yauzl.open(file, { lazyEntries: true, autoClose: false, strictFileNames: false, validateEntrySizes: true }, (err, z) => (err ? reject(err) : resolve(z!))));
}

/**
 * A bag inside a zip, read with yauzl straight from the file (entries are streamed, never the
 * whole zip). The zip's single top-level folder is the bag; a zip of the bag's contents without
 * that folder is read too. Call close() when done.
 */
export async function zipBagSource(file: string): Promise<BagSource & { close(): void; base: string }> {
  const zip = await openZip(file);
  const entries = new Map<string, yauzl.Entry>();
  await new Promise<void>((resolve, reject) => {
    zip.on('entry', (e: yauzl.Entry) => {
      if (!e.fileName.endsWith('/')) entries.set(e.fileName, e);
      zip.readEntry();
    });
    zip.on('end', () => resolve());
    zip.on('error', reject);
    zip.readEntry();
  });
  const names = [...entries.keys()];
  const tops = new Set(names.map((n) => n.split('/')[0]));
  const base = !names.includes(BAGIT) && tops.size === 1 ? [...tops][0] : '';
  const prefix = base ? `${base}/` : '';
  const entryOf = (p: string) => {
    const e = entries.get(prefix + p);
    if (!e) throw new Error(`${p} is not in the zip`);
    return e;
  };
  const stream = (p: string) =>
    new Promise<Readable>((resolve, reject) => zip.openReadStream(entryOf(p), (err, s) => (err ? reject(err) : resolve(s!))));
  return {
    base,
    async list() {
      return names.filter((n) => n.startsWith(prefix)).map((n) => ({ path: n.slice(prefix.length), bytes: entries.get(n)!.uncompressedSize }));
    },
    async readText(p) {
      const chunks: Buffer[] = [];
      for await (const c of await stream(p)) chunks.push(c as Buffer);
      return Buffer.concat(chunks).toString('utf8');
    },
    async sha256(p) {
      return sha256Stream(await stream(p));
    },
    close: () => zip.close(),
  };
}

/** Opens a bag from a zip file or a folder. */
export async function openBag(target: string): Promise<BagSource & { close(): void }> {
  const st = await fs.stat(target);
  if (st.isDirectory()) return { ...(await folderBagSource(target)), close: () => undefined };
  return zipBagSource(target);
}

