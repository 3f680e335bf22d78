/**
 * Ingest benchmark (`npm run bench:ingest`, run inside tests/bench/with-stack.sh): prints figures,
 * asserts nothing.
 * 100 generated 3600x2400 scans (6x4 in at 600 dpi; invented scenes, each aged differently so every
 * file has other bytes) are uploaded through the API, four at a time, and timed until every item
 * is ready for review (analysis, proposed correction, the small copies of the original and of the
 * proposal), then on until every full-size corrected JPEG is made (the render queue, fed once no scan
 * waits for analysis: jobs/render.ts); both times are printed, each with its ratio. The floor,
 * measured in the same run (tests/bench/floor.ts): 100 x a bare sharp decode -> JPEG q92 encode of
 * these scans on one core (pinned with taskset), divided by the 2 cores; beside it, what 100 bare
 * decode -> encodes two at a time really take on this machine. The web server's and the worker's resident memory is sampled from
 * /proc throughout, at each quarter of the batch, to show it stays flat as the batch grows.
 * BENCH_COUNT changes the number of scans; BENCH_SCANS_DIR keeps the generated scans there for the next run.
 * Ends with `ingest_ratio`, `server_peak_rss_mb` and `worker_peak_rss_mb`.
 */
import { createReadStream, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import sharp from 'sharp';
import { closeDb } from '../../db/index.ts';
import { openDatabase } from '../../src/lib/server/database.ts';
import { isSettled } from '../../src/lib/batches/schemas.ts';
import { stateCounts } from '../../src/lib/server/batches.ts';
import { AGEING_MODELS, agePixels, encodeScene, generateScene, type Ageing } from '../../src/lib/demo/synthetic.ts';
import { analyseForReview, renderCorrected } from '../../src/lib/restoration/imaging.ts';
import { PREVIEW_SIDE, THUMBNAIL_SIDE } from '../../src/lib/server/processing.ts';
import { describeFloor, measureFloor } from './floor.ts';
import { Agent, request } from 'node:http';
import { readdirSync } from 'node:fs';
import { makeArchive } from '../support/fixtures.ts';

openDatabase();

const COUNT = Number(process.env.BENCH_COUNT ?? 100);
const WIDTH = 3600;
const HEIGHT = 2400;
const CORES = 2;
const UPLOADS_AT_ONCE = 4;
const FLOOR_SAMPLES = 12;
const BASE = process.env.APP_URL!;
const keepAlive = new Agent({ keepAlive: true, maxSockets: 8 });
const serverPid = Number(process.env.DRAWERLIGHT_SERVER_PID);
const workerPid = Number(process.env.DRAWERLIGHT_WORKER_PID);

sharp.cache(false);

function memory(pid: number): { rss: number; hwm: number } {
  const text = readFileSync(`/proc/${pid}/status`, 'utf8');
  const kb = (name: string) => Number(new RegExp(`^${name}:\\s+(\\d+) kB`, 'm').exec(text)?.[1] ?? 0);
  return { rss: kb('VmRSS') / 1024, hwm: kb('VmHWM') / 1024 };
}

/** CPU seconds of every PostgreSQL process now running (backends that exited take theirs with them). */
function postgresCpuSeconds(): number {
  let total = 0;
  for (const pid of readdirSync('/proc').filter((d) => /^\d+$/.test(d))) {
    try {
      if (readFileSync(`/proc/${pid}/comm`, 'utf8').trim() === 'postgres') total += cpuSeconds(Number(pid));
    } catch {
      // gone meanwhile
    }
  }
  return total;
}

/** CPU seconds of each thread of a process, summed by the thread's name (main thread first). */
function cpuByThread(pid: number): Map<string, number> {
  const out = new Map<string, number>();
  for (const tid of readdirSync(`/proc/${pid}/task`)) {
    try {
      const name = Number(tid) === pid ? 'main thread' : readFileSync(`/proc/${pid}/task/${tid}/comm`, 'utf8').trim();
      const fields = readFileSync(`/proc/${pid}/task/${tid}/stat`, 'utf8').replace(/^.*\) /, '').split(' ');
      out.set(name, (out.get(name) ?? 0) + (Number(fields[11]) + Number(fields[12])) / 100);
    } catch {
      // thread gone
    }
  }
  return out;
}

/** User + system CPU seconds a process has used so far (/proc/<pid>/stat, clock ticks of 1/100 s). */
function cpuSeconds(pid: number): number {
  const fields = readFileSync(`/proc/${pid}/stat`, 'utf8').replace(/^.*\) /, '').split(' ');
  // after the command name: state is field 3, utime field 14, stime field 15
  return (Number(fields[11]) + Number(fields[12])) / 100;
}

async function generate(dir: string): Promise<string[]> {
  const t0 = performance.now();
  const kept = Array.from({ length: COUNT }, (_, i) => join(dir, `scan-${String(i + 1).padStart(3, '0')}.jpg`));
  if (process.env.BENCH_SCANS_DIR && kept.every((f) => existsSync(f))) {
    console.log(`reusing the ${COUNT} generated scans in ${dir} (BENCH_SCANS_DIR)`);
    return kept;
  }
  const scenes = [
    generateScene({ width: WIDTH, height: HEIGHT, border: true, seed: 1 }),
    generateScene({ width: WIDTH, height: HEIGHT, border: false, seed: 2 }),
    generateScene({ width: WIDTH, height: HEIGHT, border: true, monochrome: true, seed: 3 }),
    generateScene({ width: WIDTH, height: HEIGHT, border: true, seed: 4 }),
  ];
  const files: string[] = [];
  for (let i = 0; i < COUNT; i++) {
    const severity = 0.2 + (0.8 * i) / Math.max(1, COUNT - 1);
    const scene = i % scenes.length;
    const ageing: Ageing = scene === 2 ? AGEING_MODELS.yellowedMonochrome(severity) : i % 3 === 0 ? AGEING_MODELS.lightFaded(severity) : AGEING_MODELS.darkStorage(severity);
    const p = join(dir, `scan-${String(i + 1).padStart(3, '0')}.jpg`);
    writeFileSync(p, await encodeScene(agePixels(scenes[scene], ageing), { format: 'jpeg', quality: 92 }));
    files.push(p);
  }
  const mb = files.reduce((n, f) => n + statSync(f).size, 0) / 1048576;
  console.log(`generated ${files.length} scans of ${WIDTH}x${HEIGHT} (${mb.toFixed(0)} MB) in ${((performance.now() - t0) / 1000).toFixed(1)} s (not counted)`);
  return files;
}

/**
 * The engine alone, as the worker calls it, two scans at a time, in ms per scan: the analyse job's
 * work (analysis, proposal, small copies) and the render job's (full-size corrected JPEG and its
 * small copies). Where the pipeline's time goes, apart from upload, storage and queue.
 */
async function engineMs(files: string[]): Promise<{ analyse: { wall: number; cpu: number }; render: { wall: number; cpu: number } }> {
  sharp.concurrency(0);
  const bytes = files.slice(0, FLOOR_SAMPLES).map((f) => readFileSync(f));
  const previews = { preview: PREVIEW_SIDE, thumbnail: THUMBNAIL_SIDE };
  const first = await analyseForReview(bytes[0], { previews });
  const pairs = async (fn: (b: Buffer) => Promise<unknown>) => {
    const c0 = process.cpuUsage();
    const t0 = performance.now();
    for (let i = 0; i + 1 < bytes.length; i += 2) await Promise.all([fn(bytes[i]), fn(bytes[i + 1])]);
    const c = process.cpuUsage(c0);
    const n = bytes.length - (bytes.length % 2);
    return { wall: (performance.now() - t0) / n, cpu: (c.user + c.system) / 1000 / n };
  };
  const analyse = await pairs((b) => analyseForReview(b, { previews }));
  const render = await pairs((b) => renderCorrected(b, first.correction, { previews: { ...previews, correctedOnly: true } }));
  return { analyse, render };
}

async function api(token: string, method: string, path: string, body?: unknown) {
  const res = await fetch(BASE + path, {
    method,
    headers: { authorization: `Bearer ${token}`, accept: 'application/json', ...(body ? { 'content-type': 'application/json' } : {}) },
    body: body ? JSON.stringify(body) : undefined,
  });
  return { status: res.status, body: (await res.json()) as any };
}

/**
 * Streams one file to the upload endpoint with node:http (the client stands in for a browser on
 * another computer: fetch with a web stream cost this process about 12 ms of CPU per scan on
 * the same two cores as the server and worker, a plain request about a third of that).
 */
function uploadFile(token: string, batchId: string, file: string): Promise<number> {
  const url = new URL(`${BASE}/api/batches/${batchId}/files`);
  return new Promise((resolve, reject) => {
    const req = request(
      url,
      {
        method: 'POST',
        agent: keepAlive,
        headers: { authorization: `Bearer ${token}`, 'content-type': 'application/octet-stream', 'content-length': String(statSync(file).size), 'x-file-name': encodeURIComponent(file.split('/').pop()!) },
      },
      (res) => {
        res.resume();
        res.on('end', () => resolve(res.statusCode ?? 0));
        res.on('error', reject);
      },
    );
    req.on('error', reject);
    createReadStream(file).pipe(req);
  });
}

// BENCH_SCANS_DIR keeps the generated scans between runs (they take about half a minute to make).
const keepScans = process.env.BENCH_SCANS_DIR;
const work = keepScans ?? mkdtempSync(join(tmpdir(), 'drawerlight-bench-ingest-'));
if (keepScans) mkdirSync(keepScans, { recursive: true });
try {
  const files = await generate(work);
  console.log(`load average at start: ${loadavg().map((x) => x.toFixed(2)).join(' ')}`);
  const floor = await measureFloor(files.slice(0, FLOOR_SAMPLES), 2);
  for (const line of describeFloor(floor)) console.log(line);
  const floorS = (COUNT * floor.singleCore) / 1000 / CORES;
  const twoLanesS = (COUNT * floor.twoLanes) / 1000;
  console.log(`floor for ${COUNT} scans: ${COUNT} x ${floor.singleCore.toFixed(1)} ms / ${CORES} cores = ${floorS.toFixed(2)} s; ${COUNT} bare decode -> encodes two at a time take ${twoLanesS.toFixed(2)} s here`);
  const bare = { wall: floor.singleCore, cpu: floor.oneLibvipsThreadCpu };

  const engine = await engineMs(files);
  console.log(`engine alone, two at a time: analyse job ${engine.analyse.wall.toFixed(1)} ms/scan wall, ${engine.analyse.cpu.toFixed(1)} ms CPU; render job ${engine.render.wall.toFixed(1)} ms/scan wall, ${engine.render.cpu.toFixed(1)} ms CPU; both against the bare decode -> encode's CPU: ${((engine.analyse.cpu + engine.render.cpu) / bare.cpu).toFixed(2)}`);

  const archive = await makeArchive('bench-ingest');
  const token = archive.editor.token;
  const created = await api(token, 'POST', '/api/batches', { name: `Benchmark batch ${Date.now()}`, sourceKind: 'drawer', sourceLabel: 'Generated prints' });
  if (created.status !== 201) throw new Error(`could not create the batch: ${JSON.stringify(created.body)}`);
  const batchId = created.body.id as string;

  const threadsBefore = cpuByThread(workerPid);
  const cpuBefore = { server: cpuSeconds(serverPid), worker: cpuSeconds(workerPid), postgres: postgresCpuSeconds(), bench: process.cpuUsage() };
  const before = { server: memory(serverPid), worker: memory(workerPid) };
  console.log(`before: server ${before.server.rss.toFixed(0)} MB, worker ${before.worker.rss.toFixed(0)} MB resident`);
  const peak = { server: 0, worker: 0 };
  const sampler = setInterval(() => {
    peak.server = Math.max(peak.server, memory(serverPid).rss);
    peak.worker = Math.max(peak.worker, memory(workerPid).rss);
  }, 100);

  const t0 = performance.now();
  let next = 0;
  let uploadedAt = 0;
  const statuses: number[] = [];
  const uploads = Promise.all(
    Array.from({ length: UPLOADS_AT_ONCE }, async () => {
      while (next < files.length) {
        const f = files[next++];
        statuses.push(await uploadFile(token, batchId, f));
      }
    }),
  ).then(() => {
    uploadedAt = performance.now();
  });

  const quarters = new Set<number>();
  let counts: any = {};
  for (;;) {
    // Watched in the database with the counts the batch API serves (stateCounts), every 100 ms:
    // asking the web server that often would add its own work to the figures.
    counts = (await stateCounts([batchId])).get(batchId)!;
    const s = { body: { settled: isSettled(counts) } };
    const done = (counts.ready ?? 0) + (counts.failed ?? 0);
    for (const q of [1, 2, 3, 4]) {
      if (!quarters.has(q) && done >= (COUNT * q) / 4) {
        quarters.add(q);
        const m = { server: memory(serverPid), worker: memory(workerPid) };
        console.log(`${String(done).padStart(3)} of ${COUNT} done at ${((performance.now() - t0) / 1000).toFixed(1).padStart(5)} s: server ${m.server.rss.toFixed(0)} MB, worker ${m.worker.rss.toFixed(0)} MB resident`);
      }
    }
    if (done >= COUNT && s.body.settled) break;
    if (performance.now() - t0 > 30 * 60 * 1000) throw new Error(`gave up after 30 minutes: ${JSON.stringify(counts)}`);
    await new Promise((r) => setTimeout(r, 100));
  }
  const totalS = (performance.now() - t0) / 1000;
  const benchCpu = process.cpuUsage(cpuBefore.bench);
  const cpuUsed = { server: cpuSeconds(serverPid) - cpuBefore.server, worker: cpuSeconds(workerPid) - cpuBefore.worker, postgres: postgresCpuSeconds() - cpuBefore.postgres, bench: (benchCpu.user + benchCpu.system) / 1e6 };
  const threadsAtReady = cpuByThread(workerPid);
  await uploads;

  // On until every ready print has its full-size corrected JPEG.
  let fullSize = 0;
  const renderQuarters = new Set<number>();
  for (;;) {
    const c = (await stateCounts([batchId])).get(batchId)!;
    fullSize = c.fullSize;
    for (const q of [1, 2, 3, 4]) {
      if (!renderQuarters.has(q) && fullSize >= (c.ready * q) / 4) {
        renderQuarters.add(q);
        const m = { server: memory(serverPid), worker: memory(workerPid) };
        console.log(`${String(fullSize).padStart(3)} of ${c.ready} rendered at ${((performance.now() - t0) / 1000).toFixed(1).padStart(5)} s: server ${m.server.rss.toFixed(0)} MB, worker ${m.worker.rss.toFixed(0)} MB resident`);
      }
    }
    if (fullSize >= c.ready) break;
    if (performance.now() - t0 > 30 * 60 * 1000) throw new Error(`gave up on the renders after 30 minutes: ${JSON.stringify(c)}`);
    await new Promise((r) => setTimeout(r, 100));
  }
  const renderedS = (performance.now() - t0) / 1000;
  const cpuToRendered = { server: cpuSeconds(serverPid) - cpuBefore.server, worker: cpuSeconds(workerPid) - cpuBefore.worker, postgres: postgresCpuSeconds() - cpuBefore.postgres };
  clearInterval(sampler);
  const after = { server: memory(serverPid), worker: memory(workerPid) };
  peak.server = Math.max(peak.server, after.server.hwm);
  peak.worker = Math.max(peak.worker, after.worker.hwm);

  const refused = statuses.filter((s) => s !== 201).length;
  console.log(`uploads: ${statuses.length} answered, ${refused} not 201; all uploaded after ${((uploadedAt - t0) / 1000).toFixed(1)} s`);
  console.log(`items: ${counts.ready} ready, ${counts.failed} failed`);
  console.log(`ingest of ${COUNT} scans until all ready for review: ${totalS.toFixed(2)} s (${((totalS * 1000) / COUNT).toFixed(0)} ms/scan)`);
  console.log(`until every full-size corrected JPEG was made as well: ${renderedS.toFixed(2)} s (${fullSize} renders)`);
  const per = (s: number) => ((s * 1000) / COUNT).toFixed(1);
  console.log(`CPU per scan until ready: worker ${per(cpuUsed.worker)} ms, web server ${per(cpuUsed.server)} ms, this uploading client ${per(cpuUsed.bench)} ms, PostgreSQL ${per(cpuUsed.postgres)} ms (its processes still running)`);
  console.log(`CPU per scan until rendered: worker ${per(cpuToRendered.worker)} ms, web server ${per(cpuToRendered.server)} ms, PostgreSQL ${per(cpuToRendered.postgres)} ms; worker_cpu_ratio_to_bare: ${((cpuToRendered.worker * 1000) / COUNT / bare.cpu).toFixed(2)}`);
  const threadsAfter = cpuByThread(workerPid);
  const byThread = (from: Map<string, number>, to: Map<string, number>) =>
    [...to.entries()].map(([name, s]) => [name, s - (from.get(name) ?? 0)] as const).filter(([, s]) => s > 0.005).map(([name, s]) => `${name} ${((s * 1000) / COUNT).toFixed(1)} ms`).join(', ');
  console.log(`worker CPU per scan by thread until ready: ${byThread(threadsBefore, threadsAtReady)}`);
  console.log(`worker CPU per scan by thread, renders after ready: ${byThread(threadsAtReady, threadsAfter)}`);
  console.log(`load average at end: ${loadavg().map((x) => x.toFixed(2)).join(' ')}`);
  console.log(`ingest_ratio_to_bare_two_lanes: ${(totalS / twoLanesS).toFixed(2)} (against ${COUNT} bare decode -> encodes run two at a time)`);
  console.log(`ingest_ratio_to_bare_one_libvips_thread: ${(totalS / ((COUNT * floor.oneLibvipsThread) / 1000 / CORES)).toFixed(2)} (the floor as earlier runs took it: unpinned, whose writer uses a second core, over 2 cores)`);
  console.log(`full_size_ratio: ${(renderedS / floorS).toFixed(2)} (until every full-size corrected JPEG is made too, against the same floor)`);
  console.log('ingest_ratio is the wall time until all are ready for review against the bare decode -> encode (q92, sharp\'s defaults) on one core, times the count, over 2 cores');
  console.log(`ingest_ratio: ${(totalS / floorS).toFixed(2)}`);
  console.log(`server_peak_rss_mb: ${peak.server.toFixed(0)}`);
  console.log(`worker_peak_rss_mb: ${peak.worker.toFixed(0)}`);
} finally {
  if (!keepScans) rmSync(work, { recursive: true, force: true });
  await closeDb();
}
