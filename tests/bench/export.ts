/**
 * Export benchmark (`npm run bench:export`, run inside tests/bench/with-stack.sh): prints figures,
 * asserts nothing.
 * 100 generated prints (invented scenes from src/lib/demo/synthetic.ts, 3600x2400, each aged
 * differently so every file has other bytes) are put straight into the database and storage as
 * accepted items with a corrected JPEG, captions and dates, so the figure is the export alone.
 * One export of all of them, with the untouched scans alongside, is timed from the request to
 * "ready" (embedded JPEGs, zip streamed to storage, the bag verified from the zip). The floor,
 * measured in the same run: 100 x a bare sharp decode -> JPEG q95 encode of one render on one core
 * (the export works one print at a time). The worker's resident memory is sampled from /proc at
 * each quarter of the export, to show it stays flat as the zip grows. The export runs in a process
 * of its own that the worker starts (jobs/export-run.ts): `worker_peak_rss_mb` is the highest sum
 * of the worker's and its children's resident memory seen during the export, `worker_idle_rss_mb`
 * the worker's once the export process has ended and 5 s have passed (what it keeps while idle).
 * `--count N` (or BENCH_COUNT) exports N prints instead of 100; the figure is for 500.
 * Ends with `export_seconds`, `export_peak_rss_mb`, `worker_peak_rss_mb` and `worker_idle_rss_mb`.
 */
import { readFileSync } from 'node:fs';
import { Readable } from 'node:stream';
import sharp from 'sharp';
import { Batch, Item, Original, closeDb } from '../../db/index.ts';
import { openDatabase } from '../../src/lib/server/database.ts';
import { AGEING_MODELS, agePixels, encodeScene, generateScene } from '../../src/lib/demo/synthetic.ts';
import { storage } from '../../src/lib/server/storage.ts';
import { makeArchive } from '../support/fixtures.ts';

openDatabase();

const countFlag = process.argv.indexOf('--count');
const COUNT = Number(countFlag > 0 ? process.argv[countFlag + 1] : (process.env.BENCH_COUNT ?? 100));
const WIDTH = 3600;
const HEIGHT = 2400;
const FLOOR_SAMPLES = 8;
const BASE = process.env.APP_URL!;
const workerPid = Number(process.env.DRAWERLIGHT_WORKER_PID);
const CAPTIONS = ['Picnic at the lake', 'Zoë’s first bicycle', 'Großvater in the garden', 'The new car', 'Christmas at Lough Arrow', 'Ōta and Máire on the pier'];
const DATES = ['1981', '1981~', '198X', '1979-07', '1983-22', '1980/1985', '1984-12-25', null];

sharp.cache(false);

function memory(pid: number): { rss: number; hwm: number } {
  const text = readFileSync(`/proc/${pid}/status`, 'utf8');
  const kb = (name: string) => Number(new RegExp(`^${name}:\\s+(\\d+) kB`, 'm').exec(text)?.[1] ?? 0);
  return { rss: kb('VmRSS') / 1024, hwm: kb('VmHWM') / 1024 };
}

/** Pids of `pid`'s live children, from /proc (the export process the worker starts). */
function childrenOf(pid: number): number[] {
  try {
    return readFileSync(`/proc/${pid}/task/${pid}/children`, 'utf8').trim().split(/\s+/).filter(Boolean).map(Number);
  } catch {
    return [];
  }
}

/** Resident memory of `pid` and all its children in MB (0 for a process that is gone); and the children's own high-water marks. */
function treeMemory(pid: number): { rss: number; childHwm: number } {
  let rss = 0;
  let childHwm = 0;
  const walk = (p: number, isChild: boolean) => {
    try {
      const m = memory(p);
      rss += m.rss;
      if (isChild) childHwm = Math.max(childHwm, m.hwm);
    } catch {
      return;
    }
    for (const c of childrenOf(p)) walk(c, true);
  };
  walk(pid, false);
  return { rss, childHwm };
}

async function api(token: string, method: string, path: string, body?: unknown) {
  const res = await fetch(BASE + path, {
    method,
    headers: { authorization: `Bearer ${token}`, accept: 'application/json', origin: BASE, ...(body ? { 'content-type': 'application/json' } : {}) },
    body: body ? JSON.stringify(body) : undefined,
  });
  return { status: res.status, body: (await res.json()) as any };
}

async function main() {
  const archive = await makeArchive('bench-export');
  const batch = await Batch.create({ archiveId: archive.id, name: 'Bench shoebox', sourceKind: 'box', sourceLabel: 'Shoebox 1', createdBy: archive.editor.id });
  const store = storage();
  const t0 = performance.now();
  const scenes = [generateScene({ width: WIDTH, height: HEIGHT, border: true, seed: 1 }), generateScene({ width: WIDTH, height: HEIGHT, border: false, seed: 2 })];
  let firstRender: Buffer | null = null;
  let bytes = 0;
  for (let i = 0; i < COUNT; i++) {
    const severity = 0.2 + (0.8 * i) / Math.max(1, COUNT - 1);
    const jpeg = await encodeScene(agePixels(scenes[i % 2], AGEING_MODELS.darkStorage(severity)), { format: 'jpeg', quality: 92 });
    firstRender ??= jpeg;
    bytes += jpeg.length;
    const blob = await store.putContentAddressed('originals', Readable.from([jpeg]), { ext: '.jpg' });
    const original = await Original.create({ archiveId: archive.id, sha256: blob.sha256, storageKey: blob.key, bytes: blob.bytes, mime: 'image/jpeg', width: WIDTH, height: HEIGHT, createdBy: archive.editor.id });
    const item = await Item.create({
      archiveId: archive.id, batchId: batch.id, originalId: original.id, seq: i + 1, originalName: `scan-${i + 1}.jpg`, state: 'ready',
      decision: 'accepted', decidedAt: new Date(), caption: `${CAPTIONS[i % CAPTIONS.length]} ${i + 1}`, dateEdtf: DATES[i % DATES.length], place: 'Sligo',
    });
    const renderKey = `renders/${item.id}/v1.jpg`;
    await store.put(renderKey, jpeg);
    await item.update({ renderKey, renderVersion: 1, currentVersion: 1 });
  }
  console.log(`generated ${COUNT} prints of ${WIDTH}x${HEIGHT} (${(bytes / 1048576).toFixed(0)} MB of renders, as many of originals) in ${((performance.now() - t0) / 1000).toFixed(1)} s (not counted)`);

  // Floor: what one core needs just to decode and re-encode every render once.
  sharp.concurrency(1);
  await sharp(firstRender!).jpeg({ quality: 95 }).toBuffer();
  const f0 = performance.now();
  for (let i = 0; i < FLOOR_SAMPLES; i++) await sharp(firstRender!).jpeg({ quality: 95 }).toBuffer();
  const floorSeconds = (((performance.now() - f0) / FLOOR_SAMPLES) * COUNT) / 1000;

  const before = memory(workerPid);
  const started = performance.now();
  const r = await api(archive.editor.token, 'POST', '/api/exports', { selection: { kind: 'batch', batchId: batch.id }, includeOriginals: true });
  if (r.status !== 202) throw new Error(`export request answered ${r.status}: ${JSON.stringify(r.body)}`);
  const quarters: string[] = [];
  let nextQuarter = 25;
  let peakRss = before.rss;
  let peakTree = before.rss;
  let exportProcessHwm = 0;
  let status: any;
  // Sampled more often than the status is asked for, so a short peak (the final check) is seen.
  const sampler = setInterval(() => {
    const t = treeMemory(workerPid);
    peakTree = Math.max(peakTree, t.rss);
    exportProcessHwm = Math.max(exportProcessHwm, t.childHwm);
  }, 100);
  for (;;) {
    status = (await api(archive.editor.token, 'GET', `/api/exports/${r.body.id}`)).body;
    const m = memory(workerPid);
    peakRss = Math.max(peakRss, m.rss);
    while (status.progress.percent >= nextQuarter && nextQuarter <= 100) {
      quarters.push(`${nextQuarter}%: ${m.rss.toFixed(0)} MB`);
      nextQuarter += 25;
    }
    if (status.state === 'ready' || status.state === 'failed') break;
    await new Promise((res) => setTimeout(res, 200));
  }
  const seconds = (performance.now() - started) / 1000;
  if (status.state !== 'ready') throw new Error(`export failed: ${status.failureReason}`);
  const after = memory(workerPid);
  peakRss = Math.max(peakRss, after.rss);
  // Idle: the export process gone, then 5 s for anything the worker would still give back.
  while (childrenOf(workerPid).length) await new Promise((res) => setTimeout(res, 100));
  clearInterval(sampler);
  await new Promise((res) => setTimeout(res, 5000));
  const idle = treeMemory(workerPid).rss;

  console.log(`zip: ${(status.zipBytes / 1048576).toFixed(0)} MB, ${status.items} prints with originals, bag verified: ${status.verified}`);
  console.log(`worker rss before the export: ${before.rss.toFixed(0)} MB; during it (the worker process alone): ${quarters.join(', ')}; after: ${after.rss.toFixed(0)} MB; high-water mark since the worker started: ${after.hwm.toFixed(0)} MB`);
  console.log(`worker and its export process together: peak ${peakTree.toFixed(0)} MB; the export process's own high-water mark ${exportProcessHwm.toFixed(0)} MB; the worker idle afterwards ${idle.toFixed(0)} MB`);
  console.log(`floor (bare decode -> q95 encode of ${COUNT} renders on one core): ${floorSeconds.toFixed(1)} s`);
  console.log(`export_floor_seconds: ${floorSeconds.toFixed(1)}`);
  console.log(`export_ratio: ${(seconds / floorSeconds).toFixed(2)}`);
  console.log(`export_rss_growth_mb: ${(after.rss - before.rss).toFixed(0)}`);
  console.log(`export_seconds: ${seconds.toFixed(1)}`);
  console.log(`export_peak_rss_mb: ${peakRss.toFixed(0)}`);
  console.log(`export_process_peak_rss_mb: ${exportProcessHwm.toFixed(0)}`);
  console.log(`worker_peak_rss_mb: ${peakTree.toFixed(0)}`);
  console.log(`worker_idle_rss_mb: ${idle.toFixed(0)}`);
}

try {
  await main();
} finally {
  await closeDb();
}
