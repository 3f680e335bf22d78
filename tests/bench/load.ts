/**
 * Load benchmark (`npm run bench:load`, run inside tests/bench/with-stack.sh): prints figures,
 * asserts nothing. Only 127.0.0.1, bounded in count and time.
 * Four uploaders at once (four family members at their scanners), each sending 50 generated scans
 * (invented scenes from src/lib/demo/synthetic.ts, 1200x800 unless BENCH_LOAD_WIDTH/HEIGHT say
 * otherwise) one after another into a batch of their own, against one web server and one worker.
 * A fifth client, in a process of its own (tests/bench/status-poller.ts: this process's uploads
 * cannot delay its calls or its clock), asks for a batch's status (GET /api/batches/:id) every
 * 250 ms from the first upload until every batch is analysed (the worker busy all along), at most
 * 4000 calls or 10 minutes. The floor, measured in the same run by the same process: the same status
 * call on the idle server before the load. Ends with `stored: <n>/<n>` and `status_p95_ms: <n>`.
 */
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { Op, QueryTypes } from 'sequelize';
import { Original, closeDb, db } from '../../db/index.ts';
import { openDatabase } from '../../src/lib/server/database.ts';
import { AGEING_MODELS, syntheticScan } from '../../src/lib/demo/synthetic.ts';
import { asToken, makeArchive } from '../support/fixtures.ts';
import { createBatch, sha256, upload } from '../support/scans.ts';

openDatabase();

const UPLOADERS = 4;
const PER_UPLOADER = Number(process.env.BENCH_LOAD_FILES ?? 50);
const WIDTH = Number(process.env.BENCH_LOAD_WIDTH ?? 1200);
const HEIGHT = Number(process.env.BENCH_LOAD_HEIGHT ?? 800);
const STATUS_EVERY_MS = 250;
const MAX_STATUS_CALLS = 4000;
const MAX_SECONDS = 600;
const IDLE_SAMPLES = 60;

if (!/^http:\/\/127\.0\.0\.1:\d+$/.test(process.env.APP_URL ?? '')) throw new Error('bench:load talks to 127.0.0.1 only; run it through npm run bench:load');

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

function percentile(values: number[], p: number): number {
  if (!values.length) return NaN;
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.min(sorted.length - 1, Math.ceil((p / 100) * sorted.length) - 1)];
}

const POLLER = fileURLToPath(new URL('./status-poller.ts', import.meta.url));

/** A status client in a process of its own; `stop()` ends it and gives its samples. */
function statusPoller(token: string, batchIds: string[], calls: number): { stop: () => void; samples: Promise<{ at: number[]; ms: number[]; failed: number }> } {
  const child = spawn(process.execPath, ['--import', 'tsx', POLLER, String(STATUS_EVERY_MS), String(calls), ...batchIds], {
    env: { ...process.env, BENCH_STATUS_TOKEN: token },
    stdio: ['pipe', 'pipe', 'inherit'],
  });
  let out = '';
  child.stdout.on('data', (d) => (out += d));
  const samples = new Promise<{ at: number[]; ms: number[]; failed: number }>((resolve, reject) => {
    child.once('exit', (code) => (code === 0 ? resolve(JSON.parse(out)) : reject(new Error(`the status poller exited with ${code}`))));
  });
  return { stop: () => child.stdin.end('stop\n'), samples };
}

/** True once every item of these batches has been through analysis. */
async function allAnalysed(batchIds: string[], expected: number): Promise<boolean> {
  const [{ done }] = await db().query<{ done: string }>(
    "SELECT count(*) FILTER (WHERE state IN ('ready', 'failed')) AS done FROM items WHERE batch_id IN (:batchIds) AND deleted_at IS NULL",
    { replacements: { batchIds }, type: QueryTypes.SELECT },
  );
  return Number(done) >= expected;
}

const AGEINGS = [AGEING_MODELS.darkStorage(0.5), AGEING_MODELS.darkStorage(0.9), AGEING_MODELS.lightFaded(0.7), AGEING_MODELS.yellowedMonochrome(0.6)];

/**
 * The generated scans are the same in every run (seeded), and making 200 of them costs minutes on a
 * busy machine: they are kept in the system's temporary folder and made again only when missing.
 */
const SCAN_CACHE = path.join(os.tmpdir(), 'drawerlight-bench-load');
async function cachedScan(seed: number): Promise<Buffer> {
  const file = path.join(SCAN_CACHE, `${WIDTH}x${HEIGHT}-${seed}.jpg`);
  if (fs.existsSync(file)) return fs.readFileSync(file);
  const bytes = await syntheticScan({ width: WIDTH, height: HEIGHT, seed, border: seed % 2 === 0, monochrome: seed % 7 === 3, ageing: AGEINGS[seed % AGEINGS.length], format: 'jpeg', quality: 90 });
  fs.mkdirSync(SCAN_CACHE, { recursive: true });
  fs.writeFileSync(`${file}.part`, bytes);
  fs.renameSync(`${file}.part`, file);
  return bytes;
}

async function main() {
  const a = await makeArchive('load');
  const t0 = performance.now();
  const files: { name: string; bytes: Buffer }[][] = [];
  for (let u = 0; u < UPLOADERS; u++) {
    const mine: { name: string; bytes: Buffer }[] = [];
    for (let i = 0; i < PER_UPLOADER; i++) {
      const seed = 20_000 + u * 1000 + i;
      const bytes = await cachedScan(seed);
      mine.push({ name: `uploader-${u + 1}/scan-${String(i + 1).padStart(3, '0')}.jpg`, bytes });
    }
    files.push(mine);
  }
  const total = UPLOADERS * PER_UPLOADER;
  const mb = files.flat().reduce((n, f) => n + f.bytes.length, 0) / 1048576;
  console.log(`generated or read back ${total} scans of ${WIDTH}x${HEIGHT} (${mb.toFixed(1)} MB) in ${((performance.now() - t0) / 1000).toFixed(1)} s (not counted)`);

  const uploaders = Array.from({ length: UPLOADERS }, () => asToken(a.editor));
  const batchIds: string[] = [];
  for (let u = 0; u < UPLOADERS; u++) batchIds.push(await createBatch(uploaders[u], `Load: uploader ${u + 1}`));

  // Floor: the same status call on the idle server (nothing uploading, the worker idle), from the same kind of process.
  const idle = (await statusPoller(a.viewer.token, batchIds, IDLE_SAMPLES).samples).ms.slice(1);

  const deadline = Date.now() + MAX_SECONDS * 1000;
  const replies: number[][] = files.map(() => []);
  let uploadsDoneAt = Infinity;
  const poller = statusPoller(a.viewer.token, batchIds, MAX_STATUS_CALLS);
  const tUpload = performance.now();
  const uploading = Promise.all(
    files.map(async (mine, u) => {
      for (const f of mine) {
        if (Date.now() > deadline) break;
        const r = await upload(uploaders[u], batchIds[u], f.name, f.bytes).catch(() => ({ status: 0 }));
        replies[u].push(r.status);
      }
    }),
  ).then(() => {
    uploadsDoneAt = Date.now();
  });
  await uploading;
  const accepted = replies.flat().filter((s) => s === 201).length;
  while (Date.now() < deadline && !(await allAnalysed(batchIds, accepted))) await sleep(500);
  const uploadSeconds = (performance.now() - tUpload) / 1000;
  poller.stop();
  const samples = await poller.samples;
  const during = samples.ms.filter((_, i) => samples.at[i] < uploadsDoneAt);
  const afterUploads = samples.ms.filter((_, i) => samples.at[i] >= uploadsDoneAt);
  const calls = samples.ms.length;
  const failedCalls = samples.failed;

  const sent = new Set(files.flat().map((f) => sha256(f.bytes)));
  const originals = await Original.findAll({ where: { archiveId: a.id, sha256: { [Op.in]: [...sent] } }, attributes: ['sha256'] });
  const stored = Math.min(accepted, new Set(originals.map((o) => o.sha256)).size);
  const all = [...during, ...afterUploads];

  console.log(`uploads: ${accepted} answered 201 of ${total}; other answers: ${JSON.stringify(replies.flat().filter((s) => s !== 201))}`);
  console.log(`load lasted ${uploadSeconds.toFixed(1)} s until every batch was analysed; ${calls} status calls from a separate process every ${STATUS_EVERY_MS} ms (${failedCalls} not 200)`);
  console.log(`status_idle_p50_ms: ${percentile(idle, 50).toFixed(1)}`);
  console.log(`status_idle_p95_ms: ${percentile(idle, 95).toFixed(1)}`);
  console.log(`status_p95_while_uploading_ms: ${percentile(during, 95).toFixed(1)}`);
  console.log(`status_p95_worker_only_ms: ${percentile(afterUploads, 95).toFixed(1)}`);
  console.log(`status_max_ms: ${Math.max(...all).toFixed(1)}`);
  console.log(`status_p95_vs_idle: ${(percentile(all, 95) / percentile(idle, 95)).toFixed(2)}`);
  console.log(`stored: ${stored}/${total}`);
  console.log(`status_p95_ms: ${Math.round(percentile(all, 95))}`);
}

try {
  await main();
} finally {
  await closeDb();
}
