/**
 * Load benchmark (`npm run bench:load`, run inside tests/bench/with-stack.sh): prints figures,
 * asserts nothing. Only 127.0.0.1, bounded in count and time.
 * Four uploaders at once (four family members at their scanners), each sending 50 generated scans
 * (invented scenes from src/lib/demo/synthetic.ts, 1200x800 unless BENCH_LOAD_WIDTH/HEIGHT say
 * otherwise) one after another into a batch of their own, against one web server and one worker.
 * A fifth client asks for a batch's status (GET /api/batches/:id) every 100 ms from the first upload
 * until every batch is analysed (the worker busy all along), at most 4000 calls or 10 minutes.
 * The floor, measured in the same run: the same status call on the idle server before the load.
 * Ends with `stored: <n>/<n>` and `status_p95_ms: <n>`.
 */
import { Op } from 'sequelize';
import { Original, closeDb } from '../../db/index.ts';
import { AGEING_MODELS, syntheticScan } from '../../src/lib/demo/synthetic.ts';
import { asToken, makeArchive } from '../support/fixtures.ts';
import type { Client } from '../support/http.ts';
import { createBatch, sha256, upload } from '../support/scans.ts';

const UPLOADERS = 4;
const PER_UPLOADER = Number(process.env.BENCH_LOAD_FILES ?? 50);
const WIDTH = Number(process.env.BENCH_LOAD_WIDTH ?? 1200);
const HEIGHT = Number(process.env.BENCH_LOAD_HEIGHT ?? 800);
const STATUS_EVERY_MS = 100;
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

async function timedStatus(client: Client, batchId: string): Promise<{ ms: number; ok: boolean; settled: boolean }> {
  const t0 = performance.now();
  const r = await client.get(`/api/batches/${batchId}`);
  return { ms: performance.now() - t0, ok: r.status === 200, settled: Boolean(r.body?.settled) };
}

const AGEINGS = [AGEING_MODELS.darkStorage(0.5), AGEING_MODELS.darkStorage(0.9), AGEING_MODELS.lightFaded(0.7), AGEING_MODELS.yellowedMonochrome(0.6)];

async function main() {
  const a = await makeArchive('load');
  const t0 = performance.now();
  const files: { name: string; bytes: Buffer }[][] = [];
  for (let u = 0; u < UPLOADERS; u++) {
    const mine: { name: string; bytes: Buffer }[] = [];
    for (let i = 0; i < PER_UPLOADER; i++) {
      const seed = 20_000 + u * 1000 + i;
      const bytes = await syntheticScan({ width: WIDTH, height: HEIGHT, seed, border: seed % 2 === 0, monochrome: seed % 7 === 3, ageing: AGEINGS[seed % AGEINGS.length], format: 'jpeg', quality: 90 });
      mine.push({ name: `uploader-${u + 1}/scan-${String(i + 1).padStart(3, '0')}.jpg`, bytes });
    }
    files.push(mine);
  }
  const total = UPLOADERS * PER_UPLOADER;
  const mb = files.flat().reduce((n, f) => n + f.bytes.length, 0) / 1048576;
  console.log(`generated ${total} scans of ${WIDTH}x${HEIGHT} (${mb.toFixed(1)} MB) in ${((performance.now() - t0) / 1000).toFixed(1)} s (not counted)`);

  const uploaders = Array.from({ length: UPLOADERS }, () => asToken(a.editor));
  const watcher = asToken(a.viewer);
  const batchIds: string[] = [];
  for (let u = 0; u < UPLOADERS; u++) batchIds.push(await createBatch(uploaders[u], `Load: uploader ${u + 1}`));

  // Floor: the same status call on the idle server (nothing uploading, the worker idle).
  await timedStatus(watcher, batchIds[0]);
  const idle: number[] = [];
  for (let i = 0; i < IDLE_SAMPLES; i++) {
    idle.push((await timedStatus(watcher, batchIds[i % UPLOADERS])).ms);
    await sleep(STATUS_EVERY_MS);
  }

  const deadline = Date.now() + MAX_SECONDS * 1000;
  const replies: number[][] = files.map(() => []);
  let uploadsDone = false;
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
    uploadsDone = true;
  });

  const during: number[] = [];
  const afterUploads: number[] = [];
  let failedCalls = 0;
  let calls = 0;
  const settled = new Set<string>();
  while (calls < MAX_STATUS_CALLS && Date.now() < deadline) {
    const batchId = batchIds[calls % UPLOADERS];
    const s = await timedStatus(watcher, batchId);
    calls++;
    if (!s.ok) failedCalls++;
    (uploadsDone ? afterUploads : during).push(s.ms);
    if (uploadsDone && s.settled) settled.add(batchId);
    else if (!s.settled) settled.delete(batchId);
    if (uploadsDone && settled.size === UPLOADERS) break;
    await sleep(Math.max(0, STATUS_EVERY_MS - s.ms));
  }
  await uploading;
  const uploadSeconds = (performance.now() - tUpload) / 1000;

  const sent = new Set(files.flat().map((f) => sha256(f.bytes)));
  const originals = await Original.findAll({ where: { archiveId: a.id, sha256: { [Op.in]: [...sent] } }, attributes: ['sha256'] });
  const accepted = replies.flat().filter((s) => s === 201).length;
  const stored = Math.min(accepted, new Set(originals.map((o) => o.sha256)).size);
  const all = [...during, ...afterUploads];

  console.log(`uploads: ${accepted} answered 201 of ${total}; other answers: ${JSON.stringify(replies.flat().filter((s) => s !== 201))}`);
  console.log(`load lasted ${uploadSeconds.toFixed(1)} s until every batch was analysed; ${calls} status calls (${failedCalls} not 200)`);
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
