/**
 * Contact sheet benchmark (`npm run bench:sheets`, run inside tests/bench/with-stack.sh): prints
 * figures, asserts nothing.
 * 500 prints (and, to show memory does not grow with the sheet, 100) are put straight into the
 * database and storage with a thumbnail each (invented scenes from src/lib/demo/synthetic.ts,
 * 360 px like the app's, every one different), a sheet of the whole batch is made through the API,
 * and its PDF is read from the web server as a browser would, timed from the request to the last
 * byte. The web server's resident memory is sampled from /proc every 50 ms meanwhile.
 * The floor, measured in the same run: reading the same thumbnails from storage one after another
 * (what any sheet of them must at least do), and the server's resident memory just before the request.
 * Ends with `sheets_seconds_500`, `sheets_floor_seconds_500`, `sheets_peak_rss_mb`,
 * `sheets_peak_rss_mb_100` and `sheets_floor_rss_mb`.
 */
import { readFileSync } from 'node:fs';
import { Batch, Item, Original, closeDb } from '../../db/index.ts';
import { AGEING_MODELS, syntheticScan } from '../../src/lib/demo/synthetic.ts';
import { openDatabase } from '../../src/lib/server/database.ts';
import { storage } from '../../src/lib/server/storage.ts';
import { makeArchive, type TestArchive } from '../support/fixtures.ts';

openDatabase();

const BASE = process.env.APP_URL!;
const serverPid = Number(process.env.DRAWERLIGHT_SERVER_PID);

function rssMb(pid: number): number {
  const text = readFileSync(`/proc/${pid}/status`, 'utf8');
  return Number(/^VmRSS:\s+(\d+) kB/m.exec(text)?.[1] ?? 0) / 1024;
}

/** A batch of `count` prints with a stored thumbnail each; their thumbnail keys. */
async function batchOf(archive: TestArchive, count: number, firstSeed: number): Promise<{ batchId: string; keys: string[] }> {
  const batch = await Batch.create({ archiveId: archive.id, name: `Bench box of ${count}`, sourceKind: 'box', sourceLabel: 'Shoebox', createdBy: archive.editor.id });
  const store = storage();
  const keys: string[] = [];
  for (let i = 0; i < count; i++) {
    const seed = firstSeed + i;
    const thumb = await syntheticScan({ width: 360, height: 240, seed, border: seed % 2 === 0, ageing: AGEING_MODELS.darkStorage(0.3 + (i % 7) / 10), format: 'jpeg', quality: 80 });
    const original = await Original.create({ archiveId: archive.id, sha256: `${seed}`.padStart(64, '0'), storageKey: `originals/bench/${seed}.jpg`, bytes: 1, mime: 'image/jpeg', width: 3600, height: 2400, createdBy: archive.editor.id });
    const item = await Item.create({ archiveId: archive.id, batchId: batch.id, originalId: original.id, seq: i + 1, originalName: `scan-${i + 1}.jpg`, state: 'ready', caption: i % 3 ? `Picnic at the lake with Zoë and Máire, ${i + 1}` : null, dateEdtf: i % 4 ? '1981-22' : null });
    const key = `thumbnails/${item.id}/original.jpg`;
    await store.put(key, thumb);
    await item.update({ thumbKey: key });
    keys.push(key);
  }
  return { batchId: batch.id, keys };
}

/** Makes a sheet of the batch and reads its PDF: seconds, bytes, and the server's peak resident memory. */
async function sheetOf(archive: TestArchive, batchId: string): Promise<{ seconds: number; bytes: number; peak: number; before: number }> {
  const headers = { authorization: `Bearer ${archive.editor.token}`, origin: BASE, 'content-type': 'application/json', accept: 'application/json' };
  const made = await fetch(`${BASE}/api/batches/${batchId}/sheets`, { method: 'POST', headers, body: JSON.stringify({ scope: 'all', paper: 'a4' }) });
  if (made.status !== 201) throw new Error(`making the sheet answered ${made.status}: ${await made.text()}`);
  const { id } = (await made.json()) as { id: string };
  const before = rssMb(serverPid);
  let peak = before;
  const sampler = setInterval(() => (peak = Math.max(peak, rssMb(serverPid))), 50);
  const t0 = performance.now();
  const res = await fetch(`${BASE}/api/sheets/${id}/pdf`, { headers: { authorization: headers.authorization } });
  let bytes = 0;
  for await (const chunk of res.body as unknown as AsyncIterable<Uint8Array>) bytes += chunk.length;
  const seconds = (performance.now() - t0) / 1000;
  clearInterval(sampler);
  peak = Math.max(peak, rssMb(serverPid));
  if (res.status !== 200) throw new Error(`the PDF answered ${res.status}`);
  return { seconds, bytes, peak, before };
}

async function main() {
  const archive = await makeArchive('bench-sheets');
  const t0 = performance.now();
  const small = await batchOf(archive, 100, 1);
  const large = await batchOf(archive, 500, 1000);
  console.log(`generated 600 prints with thumbnails in ${((performance.now() - t0) / 1000).toFixed(1)} s (not counted)`);

  // warm the server's code path once on a small sheet, then measure
  await sheetOf(archive, small.batchId);
  const hundred = await sheetOf(archive, small.batchId);
  const five = await sheetOf(archive, large.batchId);

  const store = storage();
  const f0 = performance.now();
  let floorBytes = 0;
  for (const key of large.keys) floorBytes += (await store.readBuffer(key)).length;
  const floorSeconds = (performance.now() - f0) / 1000;

  console.log(`sheet of 100: ${hundred.seconds.toFixed(2)} s, ${(hundred.bytes / 1048576).toFixed(1)} MB of PDF; server rss ${hundred.before.toFixed(0)} -> peak ${hundred.peak.toFixed(0)} MB`);
  console.log(`sheet of 500: ${five.seconds.toFixed(2)} s, ${(five.bytes / 1048576).toFixed(1)} MB of PDF (${(floorBytes / 1048576).toFixed(1)} MB of thumbnails); server rss ${five.before.toFixed(0)} -> peak ${five.peak.toFixed(0)} MB`);
  console.log(`sheets_floor_seconds_500: ${floorSeconds.toFixed(2)}`);
  console.log(`sheets_seconds_500: ${five.seconds.toFixed(2)}`);
  console.log(`sheets_ratio_500: ${(five.seconds / Math.max(floorSeconds, 0.001)).toFixed(1)}`);
  console.log(`sheets_floor_rss_mb: ${five.before.toFixed(0)}`);
  console.log(`sheets_peak_rss_mb_100: ${hundred.peak.toFixed(0)}`);
  console.log(`sheets_peak_rss_mb: ${five.peak.toFixed(0)}`);
  console.log(`sheets_rss_growth_mb_500: ${(five.peak - five.before).toFixed(0)}`);
}

try {
  await main();
} finally {
  await closeDb();
}
