/**
 * Shared steps of every test that needs scans in the app: generated scans (invented scenes from
 * src/lib/demo/synthetic.ts,
 * aged with the engine's density model), uploads through the real API, waiting on the real worker.
 */
import { createHash } from 'node:crypto';
import { AGEING_MODELS, syntheticScan } from '../../src/lib/demo/synthetic.ts';
import type { Client } from './http.ts';

export const sha256 = (b: Buffer | Uint8Array) => createHash('sha256').update(b).digest('hex');

const AGEINGS = [AGEING_MODELS.none(), AGEING_MODELS.darkStorage(0.6), AGEING_MODELS.darkStorage(1), AGEING_MODELS.lightFaded(0.8), AGEING_MODELS.yellowedMonochrome(0.7)];

/** `count` different 600x400 JPEG scans (each seed gives other bytes). */
export async function generatedScans(count: number, firstSeed = 1, size = { width: 600, height: 400 }): Promise<{ name: string; bytes: Buffer }[]> {
  const out: { name: string; bytes: Buffer }[] = [];
  for (let i = 0; i < count; i++) {
    const seed = firstSeed + i;
    const bytes = await syntheticScan({ ...size, seed, border: seed % 2 === 0, monochrome: seed % 5 === 4, ageing: AGEINGS[seed % AGEINGS.length], format: 'jpeg', quality: 90 });
    out.push({ name: `scan-${String(seed).padStart(4, '0')}.jpg`, bytes });
  }
  return out;
}

/** Creates a batch through the API and returns its id. */
export async function createBatch(client: Client, name: string): Promise<string> {
  const r = await client.post('/api/batches', { name, sourceKind: 'box', sourceLabel: 'Test shoebox' });
  if (r.status !== 201) throw new Error(`creating a batch answered ${r.status}: ${r.text}`);
  return r.body.id as string;
}

/** Uploads one file as the raw body, the way the upload island does. */
export function upload(client: Client, batchId: string, name: string, bytes: Buffer) {
  return client.request('POST', `/api/batches/${batchId}/files`, {
    body: bytes as unknown as BodyInit,
    headers: { 'content-type': 'application/octet-stream', 'x-file-name': encodeURIComponent(name) },
  });
}

/** Uploads files `atOnce` at a time, returning the replies in order. */
export async function uploadAll(client: Client, batchId: string, files: { name: string; bytes: Buffer }[], atOnce = 4) {
  const replies: Awaited<ReturnType<typeof upload>>[] = new Array(files.length);
  let next = 0;
  await Promise.all(
    Array.from({ length: atOnce }, async () => {
      while (next < files.length) {
        const i = next++;
        replies[i] = await upload(client, batchId, files[i].name, files[i].bytes);
      }
    }),
  );
  return replies;
}

/** Polls the batch status until nothing is queued or analysing (or the time runs out). */
export async function waitSettled(client: Client, batchId: string, timeoutMs = 240_000) {
  const deadline = Date.now() + timeoutMs;
  let last: any;
  while (Date.now() < deadline) {
    const r = await client.get(`/api/batches/${batchId}`);
    last = r.body;
    if (r.status === 200 && r.body.settled) return r.body;
    await new Promise((res) => setTimeout(res, 500));
  }
  throw new Error(`batch ${batchId} did not settle in time: ${JSON.stringify(last?.counts)}`);
}

/** Polls a batch until `n` of its prints have the full-size corrected image of their current correction. */
export async function waitFullSize(client: Client, batchId: string, n: number, timeoutMs = 240_000) {
  const deadline = Date.now() + timeoutMs;
  let last: any;
  while (Date.now() < deadline) {
    const r = await client.get(`/api/batches/${batchId}`);
    last = r.body;
    if (r.status === 200 && r.body.counts.fullSize >= n) return r.body;
    await new Promise((res) => setTimeout(res, 500));
  }
  throw new Error(`batch ${batchId} did not get ${n} full-size renders in time: ${JSON.stringify(last?.counts)}`);
}
