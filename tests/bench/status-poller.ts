/**
 * The status client of `npm run bench:load`, in a process of its own (as a family member's browser
 * would be), so the uploaders' event loop cannot hold back its calls or its clock.
 *   node --import tsx tests/bench/status-poller.ts <every-ms> <max-calls> <batch-id>...
 * Asks for each batch's status in turn (GET /api/batches/:id, the viewer's token from
 * BENCH_STATUS_TOKEN) every <every-ms>, counted from the start of one call to the next, until
 * <max-calls> calls or until a line "stop" arrives on stdin. Prints one JSON line at the end:
 * { at: [epoch ms of each call's start], ms: [...], failed: n }.
 */
import { createInterface } from 'node:readline';

const [every, maxCalls, ...batchIds] = process.argv.slice(2);
const EVERY_MS = Number(every);
const MAX_CALLS = Number(maxCalls);
const BASE = process.env.APP_URL!;
const TOKEN = process.env.BENCH_STATUS_TOKEN!;
if (!EVERY_MS || !MAX_CALLS || batchIds.length === 0 || !TOKEN) throw new Error('usage: status-poller.ts <every-ms> <max-calls> <batch-id>... (BENCH_STATUS_TOKEN set)');

let stop = false;
createInterface({ input: process.stdin }).on('line', (line) => {
  if (line.trim() === 'stop') stop = true;
});

const ms: number[] = [];
const at: number[] = [];
let failed = 0;
for (let calls = 0; calls < MAX_CALLS && !stop; calls++) {
  const t0 = performance.now();
  at.push(Date.now());
  try {
    const res = await fetch(`${BASE}/api/batches/${batchIds[calls % batchIds.length]}`, { headers: { authorization: `Bearer ${TOKEN}`, accept: 'application/json' } });
    await res.arrayBuffer();
    if (res.status !== 200) failed++;
  } catch {
    failed++;
  }
  const took = performance.now() - t0;
  ms.push(took);
  await new Promise((r) => setTimeout(r, Math.max(0, EVERY_MS - took)));
}
process.stdout.write(JSON.stringify({ at, ms, failed }) + '\n');
process.exit(0);
