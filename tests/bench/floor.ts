/**
 * The floor both engine and ingest benchmarks compare against, measured in the same run: a bare
 * sharp decode -> JPEG q92 encode of the benchmark's own scans.
 * - `singleCore`: one scan after another in a child process pinned to one CPU (`taskset -c 0`):
 *   the "bare single-threaded decode -> encode" of the issues. Without taskset (not Debian's
 *   util-linux), the child's CPU time per scan stands in for it, and the figure says so.
 * - `oneLibvipsThread`: the same unpinned, with libvips' concurrency at 1, as earlier runs
 *   measured it; its JPEG writer still compresses on a second core while the first decodes.
 * - `twoLanes`: two bare decode -> encodes at a time, unpinned, in ms per scan: what the two cores
 *   of this machine really give the bare work (a perfect two cores would halve `singleCore`).
 */
import { spawn } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';

const BARE = fileURLToPath(new URL('./bare.ts', import.meta.url));
const TASKSET = '/usr/bin/taskset';

interface BareRun {
  wallMs: number;
  cpuMs: number;
  sizes: number[];
}

function child(files: string[], passes: number, pinned: boolean): Promise<BareRun> {
  const command = [process.execPath, '--import', 'tsx', BARE, String(passes), ...files];
  const [exe, ...args] = pinned ? [TASKSET, '-c', '0', ...command] : command;
  return new Promise((resolve, reject) => {
    const p = spawn(exe, args, { stdio: ['ignore', 'pipe', 'inherit'] });
    let out = '';
    p.stdout.on('data', (d) => (out += d));
    p.on('error', reject);
    p.on('exit', (code) => (code === 0 ? resolve(JSON.parse(out) as BareRun) : reject(new Error(`bare decode -> encode exited ${code}`))));
  });
}

export interface Floor {
  /** ms per scan on one core (pinned), or the CPU time per scan when pinning is not available. */
  singleCore: number;
  pinned: boolean;
  /** ms per scan, unpinned, libvips concurrency 1. */
  oneLibvipsThread: number;
  /** its CPU ms per scan. */
  oneLibvipsThreadCpu: number;
  /** ms per scan with two at a time, unpinned. */
  twoLanes: number;
  /** output bytes per scan (sharp's optimised Huffman tables). */
  sizes: number[];
}

/** Measures the floor on `files` (each figure the fastest of `passes` passes). */
export async function measureFloor(files: string[], passes = 3): Promise<Floor> {
  const pinned = existsSync(TASKSET);
  const single = await child(files, passes, pinned);
  const unpinned = await child(files, passes, false);
  // two lanes, in this process
  sharp.concurrency(1);
  const bytes = files.map((f) => readFileSync(f));
  await sharp(bytes[0]).jpeg({ quality: 92 }).toBuffer();
  let twoLanes = Infinity;
  for (let pass = 0; pass < passes; pass++) {
    let next = 0;
    const t0 = performance.now();
    await Promise.all(
      [0, 1].map(async () => {
        while (next < bytes.length) await sharp(bytes[next++]).jpeg({ quality: 92 }).toBuffer();
      }),
    );
    twoLanes = Math.min(twoLanes, (performance.now() - t0) / bytes.length);
  }
  return {
    singleCore: pinned ? single.wallMs : single.cpuMs,
    pinned,
    oneLibvipsThread: unpinned.wallMs,
    oneLibvipsThreadCpu: unpinned.cpuMs,
    twoLanes,
    sizes: single.sizes,
  };
}

/**
 * One more measurement of `singleCore` (a child process, `passes` passes, the fastest kept), for a
 * benchmark that measures the floor again between its own runs, so that a machine that slows down
 * or speeds up during the run does not favour either side.
 */
export async function singleCoreAgain(files: string[], passes = 1): Promise<number> {
  const pinned = existsSync(TASKSET);
  const run = await child(files, passes, pinned);
  return pinned ? run.wallMs : run.cpuMs;
}

/** The lines every benchmark prints about its floor. */
export function describeFloor(f: Floor): string[] {
  return [
    `bare decode -> JPEG q92 encode, one core${f.pinned ? ' (taskset -c 0)' : ' (CPU time: taskset not found)'}: ${f.singleCore.toFixed(1)} ms/scan`,
    `  same unpinned, one libvips thread: ${f.oneLibvipsThread.toFixed(1)} ms/scan wall, ${f.oneLibvipsThreadCpu.toFixed(1)} ms/scan CPU (its writer compresses on a second core)`,
    `  two at a time, unpinned: ${f.twoLanes.toFixed(1)} ms/scan (two cores give the bare work ${(f.singleCore / f.twoLanes).toFixed(2)}x one core here)`,
  ];
}
