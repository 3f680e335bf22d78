/**
 * Checks of what the product writes by programs that are not ours, from Debian's packages
 * (tests/run.sh installs them when missing): Info-ZIP's unzip, coreutils' sha256sum, ExifTool.
 * Each is another implementation of the format than the one that wrote it and the one the
 * product reads it back with.
 */
import { execFile } from 'node:child_process';
import fs from 'node:fs/promises';
import path from 'node:path';

/** Runs a program; its exit status and output, whatever the status (`out` is stdout then stderr). */
export function runTool(cmd: string, args: string[], cwd?: string): Promise<{ code: number; out: string; stdout: string }> {
  return new Promise((resolve, reject) => {
    execFile(cmd, args, { cwd, maxBuffer: 64 * 1024 * 1024 }, (err, stdout, stderr) => {
      if (err && typeof err.code !== 'number') return reject(err);
      resolve({ code: err ? (err.code as number) : 0, out: `${stdout}${stderr}`, stdout });
    });
  });
}

/**
 * Tests a zip with Info-ZIP's `unzip -t` (every entry's CRC-32), then unpacks it with `unzip`
 * into `into`; returns the one folder it holds (a bag's top folder).
 * @throws when unzip finds an error or the zip holds more than one top folder
 */
export async function unpackWithUnzip(zip: Buffer, into: string): Promise<string> {
  await fs.mkdir(into, { recursive: true });
  const file = path.join(into, 'download.zip');
  await fs.writeFile(file, zip);
  const tested = await runTool('unzip', ['-t', file]);
  if (tested.code !== 0 || !/No errors detected/.test(tested.out)) throw new Error(`unzip -t: ${tested.out}`);
  const out = path.join(into, 'unpacked');
  const unpacked = await runTool('unzip', ['-q', file, '-d', out]);
  if (unpacked.code !== 0) throw new Error(`unzip: ${unpacked.out}`);
  const top = await fs.readdir(out);
  if (top.length !== 1) throw new Error(`the zip holds ${top.length} top-level entries: ${top.join(', ')}`);
  return path.join(out, top[0]);
}

/**
 * `sha256sum --check --strict` of a BagIt manifest in its bag folder (RFC 8493 §2.1.3: a manifest
 * line is the checksum, white space, and the file's path, the format sha256sum reads).
 */
export function sha256sumCheck(bagDir: string, manifest: string): Promise<{ code: number; out: string; stdout: string }> {
  return runTool('sha256sum', ['--check', '--strict', manifest], bagDir);
}

/**
 * The tags ExifTool reads from a file, by group (`-G1`: XMP-dc, XMP-photoshop, ExifIFD, IFD0 …),
 * values as stored (`-n`: no print conversion, so dates stay as written), text as UTF-8.
 */
export async function exiftool(file: string): Promise<Record<string, unknown>> {
  const r = await runTool('exiftool', ['-json', '-G1', '-n', '-charset', 'utf8', '-a', file]);
  if (r.code !== 0) throw new Error(`exiftool: ${r.out}`);
  return (JSON.parse(r.stdout) as Record<string, unknown>[])[0];
}
