/**
 * BagIt (RFC 8493, version 1.0) helpers: the tag files a bag needs and a fixity check that
 * reports what is missing, extra or changed. Pure code over an abstract file source, so the
 * same check runs over a folder, a zip, or a bag being written.
 */

/** bagit.txt, exactly as RFC 8493 §2.1.1 gives it. */
export const BAGIT_TXT = 'BagIt-Version: 1.0\nTag-File-Character-Encoding: UTF-8\n';
export const PAYLOAD_DIR = 'data/';
export const MANIFEST = 'manifest-sha256.txt';
export const TAG_MANIFEST = 'tagmanifest-sha256.txt';
export const BAG_INFO = 'bag-info.txt';
export const BAGIT = 'bagit.txt';

/** Percent-encodes what a manifest line cannot hold: %, CR and LF (RFC 8493 §2.1.3). */
export function encodeManifestPath(path: string): string {
  return path.replace(/%/g, '%25').replace(/\r/g, '%0D').replace(/\n/g, '%0A');
}

/** Undoes encodeManifestPath (also accepting lower-case hex). */
export function decodeManifestPath(path: string): string {
  return path.replace(/%0D/gi, '\r').replace(/%0A/gi, '\n').replace(/%25/g, '%');
}

export interface ManifestEntry {
  path: string;
  sha256: string;
}

/** A manifest's text: one "<hex> <path>" line per file, sorted by path so bags are reproducible. */
export function formatManifest(entries: ManifestEntry[]): string {
  return [...entries]
    .sort((a, b) => (a.path < b.path ? -1 : a.path > b.path ? 1 : 0))
    .map((e) => `${e.sha256.toLowerCase()} ${encodeManifestPath(e.path)}\n`)
    .join('');
}

export class BagFormatError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'BagFormatError';
  }
}

/** Reads a manifest's lines; any line that is not "<64 hex> <path>" is a format error. */
export function parseManifest(text: string, name = MANIFEST): ManifestEntry[] {
  const out: ManifestEntry[] = [];
  const lines = text.replace(/\r\n/g, '\n').split('\n');
  lines.forEach((line, i) => {
    if (line === '') return;
    const m = /^([0-9a-fA-F]{64})[ \t]+(.+)$/.exec(line);
    if (!m) throw new BagFormatError(`${name} line ${i + 1} is not "<sha-256> <path>": ${JSON.stringify(line.slice(0, 80))}`);
    out.push({ sha256: m[1].toLowerCase(), path: decodeManifestPath(m[2].replace(/^\*/, '')) });
  });
  return out;
}

/** Payload-Oxum: "<total octets>.<file count>" (RFC 8493 §2.2.2). */
export function payloadOxum(octets: number, count: number): string {
  return `${octets}.${count}`;
}

/** Bagging-Date in the form RFC 8493 asks for (YYYY-MM-DD, here in UTC). */
export function baggingDate(d = new Date()): string {
  return d.toISOString().slice(0, 10);
}

/** bag-info.txt from ordered label/value pairs; values are kept on one line. */
export function formatBagInfo(fields: [string, string][]): string {
  return fields.map(([k, v]) => `${k}: ${v.replace(/[\r\n]+/g, ' ').trim()}\n`).join('');
}

/** Reads bag-info.txt, joining continuation lines (those starting with white space). */
export function parseBagInfo(text: string): [string, string][] {
  const out: [string, string][] = [];
  for (const line of text.replace(/\r\n/g, '\n').split('\n')) {
    if (line === '') continue;
    if (/^[ \t]/.test(line) && out.length) {
      out[out.length - 1][1] += ' ' + line.trim();
      continue;
    }
    const i = line.indexOf(':');
    if (i < 1) throw new BagFormatError(`bag-info.txt line is not "Label: value": ${JSON.stringify(line.slice(0, 80))}`);
    out.push([line.slice(0, i).trim(), line.slice(i + 1).trim()]);
  }
  return out;
}

/** One file of a bag, as a reader sees it. */
export interface BagFile {
  /** Path inside the bag, slash-separated ("data/1981/a.jpg", "bagit.txt"). */
  path: string;
  bytes: number;
}

/** Where a bag's files come from: a folder, a zip, or anything else that can list and hash. */
export interface BagSource {
  list(): Promise<BagFile[]>;
  readText(path: string): Promise<string>;
  sha256(path: string): Promise<string>;
}

export interface BagReport {
  ok: boolean;
  /** Named in a manifest but absent. */
  missing: string[];
  /** Present in data/ (or as a tag file) but in no manifest. */
  extra: string[];
  /** Present, but the checksum differs from the manifest. */
  changed: string[];
  /** Everything else wrong: tag files, Payload-Oxum, format. */
  problems: string[];
  payloadFiles: number;
  payloadOctets: number;
}

/** Told after each payload file is checked: how many of the manifest's files are done. */
export type CheckProgress = (checked: number, listed: number) => void | Promise<void>;

/**
 * Checks a bag against RFC 8493: bagit.txt, every payload file in the manifest with the right
 * SHA-256, no unlisted payload, Payload-Oxum, and the tag manifest over the tag files.
 * `onPayloadChecked` follows the payload files, the long part for a large bag.
 */
export async function checkBag(source: BagSource, onPayloadChecked?: CheckProgress): Promise<BagReport> {
  const report: BagReport = { ok: false, missing: [], extra: [], changed: [], problems: [], payloadFiles: 0, payloadOctets: 0 };
  const files = await source.list();
  const byPath = new Map(files.map((f) => [f.path, f]));
  const payload = files.filter((f) => f.path.startsWith(PAYLOAD_DIR));
  report.payloadFiles = payload.length;
  report.payloadOctets = payload.reduce((s, f) => s + f.bytes, 0);

  if (!byPath.has(BAGIT)) report.problems.push('bagit.txt is missing.');
  else {
    const text = await source.readText(BAGIT);
    if (text !== BAGIT_TXT) report.problems.push('bagit.txt is not exactly "BagIt-Version: 1.0" and "Tag-File-Character-Encoding: UTF-8".');
  }

  const checkManifest = async (name: string, covered: (p: string) => boolean, progress?: CheckProgress) => {
    let entries: ManifestEntry[] = [];
    try {
      entries = parseManifest(await source.readText(name), name);
    } catch (err) {
      report.problems.push(err instanceof BagFormatError ? err.message : `${name} could not be read.`);
      return;
    }
    const listed = new Set(entries.map((e) => e.path));
    let checked = 0;
    await progress?.(0, entries.length);
    for (const e of entries) {
      if (!byPath.has(e.path)) report.missing.push(e.path);
      else if ((await source.sha256(e.path)) !== e.sha256) report.changed.push(e.path);
      await progress?.(++checked, entries.length);
    }
    for (const f of files) if (covered(f.path) && !listed.has(f.path)) report.extra.push(f.path);
  };

  if (!byPath.has(MANIFEST)) report.problems.push(`${MANIFEST} is missing.`);
  else await checkManifest(MANIFEST, (p) => p.startsWith(PAYLOAD_DIR), onPayloadChecked);

  const tagFiles = (p: string) => !p.startsWith(PAYLOAD_DIR) && !p.startsWith('tagmanifest-');
  if (byPath.has(TAG_MANIFEST)) await checkManifest(TAG_MANIFEST, tagFiles);
  else report.problems.push(`${TAG_MANIFEST} is missing.`);

  if (byPath.has(BAG_INFO)) {
    try {
      const info = parseBagInfo(await source.readText(BAG_INFO));
      const oxum = info.find(([k]) => k.toLowerCase() === 'payload-oxum')?.[1];
      if (!oxum) report.problems.push('bag-info.txt has no Payload-Oxum.');
      else if (oxum !== payloadOxum(report.payloadOctets, report.payloadFiles)) {
        report.problems.push(`Payload-Oxum says ${oxum} but the payload is ${payloadOxum(report.payloadOctets, report.payloadFiles)}.`);
      }
      const date = info.find(([k]) => k.toLowerCase() === 'bagging-date')?.[1];
      if (date && !/^\d{4}-\d{2}-\d{2}$/.test(date)) report.problems.push(`Bagging-Date "${date}" is not YYYY-MM-DD.`);
    } catch (err) {
      report.problems.push(err instanceof BagFormatError ? err.message : 'bag-info.txt could not be read.');
    }
  }

  for (const list of [report.missing, report.extra, report.changed]) list.sort();
  report.ok = !report.missing.length && !report.extra.length && !report.changed.length && !report.problems.length;
  return report;
}

/** The report in lines a person can act on. */
export function describeBagReport(r: BagReport): string[] {
  const lines: string[] = [];
  for (const p of r.missing) lines.push(`missing: ${p}`);
  for (const p of r.extra) lines.push(`extra: ${p}`);
  for (const p of r.changed) lines.push(`changed: ${p}`);
  for (const p of r.problems) lines.push(`problem: ${p}`);
  if (r.ok) lines.push(`ok: ${r.payloadFiles} payload files, ${r.payloadOctets} bytes, every checksum matches`);
  return lines;
}
