/**
 * Batch correction from the command line:
 *   npm run correct -- --out <dir> [--strength 0..1] [--quality N] [--pool] <files or folders...>
 * Writes <dir>/<name>.jpg per scan and <dir>/report.json; progress on stderr; four scans in flight
 * on the two cores. Unreadable inputs are reported in one line each and make the exit status 1,
 * after every other scan has been done. Originals are only ever read.
 */
import { parseArgs } from 'node:util';
import { writeFileSync } from 'node:fs';
import { mkdir, readdir, stat, writeFile } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { basename, extname, join, resolve } from 'node:path';
import pLimit from 'p-limit';
import { analyseAndRender, imagingForLongRuns, loadReduced, readScanSync, ScanRejected } from '../lib/restoration/imaging';
import { analysePixels, poolAnalyses, type Analysis } from '../lib/restoration/analysis';
import type { Correction } from '../lib/restoration/correction';

const USAGE = `Usage: npm run correct -- --out <dir> [--strength 0..1] [--quality N] [--pool] <files or folders...>

  --out <dir>        where the corrected JPEGs and report.json go (created if missing)
  --strength <0..1>  how much of the proposed correction to apply (default 1)
  --quality <N>      JPEG quality 1-100 (default 92)
  --pool             let prints the engine is unsure of borrow the estimate of the rest of the batch
  --help             show this text`;

const SCAN_EXTENSIONS = new Set(['.jpg', '.jpeg', '.png', '.tif', '.tiff']);
/**
 * Scans in flight at once. Each scan's decode and encode run on libvips threads and its
 * measuring and tables on this thread; with four in flight one scan's JavaScript runs while
 * others decode or encode, where two in step kept one core waiting (tests/bench/engine.ts:
 * about 5 % faster than two; engine threads were slower still, each warming up its own copy of
 * the code).
 */
const AT_A_TIME = 4;
/**
 * Of those, decoding at once: one per core. Four decodes started together also end together, and
 * the four scans then queue for this thread while libvips has nothing to do; one per core, they
 * end one after another (tests/bench/engine.ts, two benchmarks of five runs each: 679 against 708 ms mean).
 */
const DECODES_AT_ONCE = Math.max(1, Math.min(AT_A_TIME, availableParallelism()));

class UsageError extends Error {}

interface Options {
  out: string;
  strength: number;
  quality: number;
  pool: boolean;
  inputs: string[];
}

function parse(argv: string[]): Options {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: {
      out: { type: 'string', short: 'o' },
      strength: { type: 'string' },
      quality: { type: 'string' },
      pool: { type: 'boolean', default: false },
      help: { type: 'boolean', short: 'h', default: false },
    },
  });
  if (values.help) {
    process.stdout.write(USAGE + '\n');
    process.exit(0);
  }
  if (!values.out) throw new UsageError('--out <dir> is required');
  if (positionals.length === 0) throw new UsageError('give at least one file or folder of scans');
  const strength = values.strength === undefined ? 1 : Number(values.strength);
  if (!Number.isFinite(strength) || strength < 0 || strength > 1) throw new UsageError('--strength must be a number from 0 to 1');
  const quality = values.quality === undefined ? 92 : Number(values.quality);
  if (!Number.isInteger(quality) || quality < 1 || quality > 100) throw new UsageError('--quality must be a whole number from 1 to 100');
  return { out: resolve(values.out), strength, quality, pool: values.pool ?? false, inputs: positionals };
}

/** Files named on the command line are all tried; folders contribute their scans (by extension), recursively, in name order. */
async function collect(inputs: string[], failures: Failure[], outDir: string): Promise<string[]> {
  const files: string[] = [];
  const walk = async (dir: string) => {
    // a previous run's results inside a folder of scans are not scans
    if (dir === outDir) return;
    const entries = (await readdir(dir, { withFileTypes: true })).sort((a, b) => a.name.localeCompare(b.name));
    for (const e of entries) {
      if (e.name.startsWith('.')) continue;
      const p = join(dir, e.name);
      if (e.isDirectory()) await walk(p);
      else if (e.isFile() && SCAN_EXTENSIONS.has(extname(e.name).toLowerCase())) files.push(p);
    }
  };
  for (const input of inputs) {
    const p = resolve(input);
    try {
      const st = await stat(p);
      if (st.isDirectory()) await walk(p);
      else files.push(p);
    } catch {
      failures.push({ input: p, code: 'unreadable', reason: 'No such file or folder.' });
    }
  }
  return [...new Set(files)];
}

/** Output names from input names; a clash (a.png and a.jpg, or two folders) gets a numeric suffix. */
function outputNames(files: string[]): string[] {
  const used = new Map<string, number>();
  return files.map((f) => {
    const stem = basename(f, extname(f)) || 'scan';
    const key = stem.toLowerCase();
    const n = (used.get(key) ?? 0) + 1;
    used.set(key, n);
    return n === 1 ? `${stem}.jpg` : `${stem}-${n}.jpg`;
  });
}

interface Failure {
  input: string;
  code: string;
  reason: string;
}

interface Done {
  input: string;
  output: string;
  width: number;
  height: number;
  analysis: Analysis;
  correction: Correction;
  ms: number;
}

/** Runs `task` over `items`, at most `limit` at a time, keeping order of results. */
async function eachLimited<T, R>(items: T[], limit: number, task: (item: T, index: number) => Promise<R>): Promise<R[]> {
  const results = new Array<R>(items.length);
  let next = 0;
  const lane = async () => {
    while (next < items.length) {
      const i = next++;
      results[i] = await task(items[i], i);
    }
  };
  await Promise.all(Array.from({ length: Math.min(limit, items.length) }, lane));
  return results;
}

function summary(a: Analysis): string {
  const d = a.dyes;
  const grade = a.pooled ? `${a.fadeGrade}, pooled` : a.fadeGrade;
  return `${grade} (cyan ${d.cyan.remainingPercent.toFixed(0)}%, magenta ${d.magenta.remainingPercent.toFixed(0)}%, yellow ${d.yellow.remainingPercent.toFixed(0)}%, stain ${a.stain.toFixed(2)} D)${a.rescanAdvised ? ', rescan from negative advised' : ''}`;
}

function reasonOf(err: unknown): { code: string; reason: string } {
  if (err instanceof ScanRejected) return { code: err.code, reason: err.message };
  const e = err as NodeJS.ErrnoException;
  return { code: e?.code ?? 'failed', reason: String(e?.message ?? err).split('\n')[0] };
}

async function main(): Promise<number> {
  let opts: Options;
  try {
    opts = parse(process.argv.slice(2));
  } catch (err) {
    process.stderr.write(`${(err as Error).message}\n\n${USAGE}\n`);
    return 2;
  }
  // long batch runs: no libvips operation cache; one libvips thread per scan, AT_A_TIME scans at a time
  imagingForLongRuns(1);

  const failures: Failure[] = [];
  const files = await collect(opts.inputs, failures, opts.out);
  const names = outputNames(files);
  await mkdir(opts.out, { recursive: true });
  const total = files.length;
  const started = Date.now();
  let finished = 0;
  const log = (line: string) => process.stderr.write(`[${++finished}/${total}] ${line}\n`);
  for (const f of failures) process.stderr.write(`${f.input}: ${f.reason}\n`);

  const corrections: (Correction | undefined)[] = files.map(() => undefined);
  const pooledAnalyses = new Map<number, Analysis>();
  if (opts.pool && files.length > 1) {
    process.stderr.write(`measuring ${total} scans to pool their estimates...\n`);
    const analyses = await eachLimited(files, AT_A_TIME, async (f) => {
      try {
        return analysePixels(await loadReduced(f));
      } catch {
        return null; // reported when it is rendered
      }
    });
    const ok = analyses.map((a, i) => (a ? i : -1)).filter((i) => i >= 0);
    const pooled = poolAnalyses(ok.map((i) => analyses[i]!));
    ok.forEach((fileIndex, k) => {
      if (!pooled[k].pooled) return;
      corrections[fileIndex] = pooled[k].proposed;
      pooledAnalyses.set(fileIndex, pooled[k]);
    });
  }

  const done: Done[] = [];
  const decodeSlot = pLimit(DECODES_AT_ONCE);
  await eachLimited(files, AT_A_TIME, async (file, i) => {
    const t0 = Date.now();
    try {
      // whole files in and out, synchronously: see readScanSync
      const r = await analyseAndRender(readScanSync(file), { strength: opts.strength, quality: opts.quality, correction: corrections[i], decodeSlot });
      const output = join(opts.out, names[i]);
      writeFileSync(output, r.buffer);
      const analysis = pooledAnalyses.get(i) ?? r.analysis;
      done[i] = { input: file, output, width: r.width, height: r.height, analysis, correction: r.correction, ms: Date.now() - t0 };
      log(`${basename(file)} -> ${names[i]}: ${summary(analysis)} ${Date.now() - t0} ms`);
    } catch (err) {
      const { code, reason } = reasonOf(err);
      failures.push({ input: file, code, reason });
      log(`${basename(file)}: not corrected: ${reason}`);
    }
  });

  const report = {
    createdAt: new Date().toISOString(),
    options: { strength: opts.strength, quality: opts.quality, pool: opts.pool },
    scans: done.filter(Boolean).map((d) => ({
      input: d.input,
      output: d.output,
      width: d.width,
      height: d.height,
      fadeGrade: d.analysis.fadeGrade,
      rescanAdvised: d.analysis.rescanAdvised,
      analysis: d.analysis,
      correction: d.correction,
      ms: d.ms,
    })),
    failures,
  };
  await writeFile(join(opts.out, 'report.json'), JSON.stringify(report, null, 2) + '\n');
  const seconds = ((Date.now() - started) / 1000).toFixed(1);
  process.stderr.write(`${report.scans.length} corrected, ${failures.length} not, in ${seconds} s; report in ${join(opts.out, 'report.json')}\n`);
  return failures.length > 0 ? 1 : 0;
}

main().then(
  (code) => process.exit(code),
  (err) => {
    process.stderr.write(`correct: ${(err as Error).message}\n`);
    process.exit(1);
  },
);
