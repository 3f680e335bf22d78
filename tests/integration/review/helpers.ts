/**
 * Setup for the review tests through the real pipeline: a batch made through the API, generated
 * faded scans (invented scenes of src/lib/demo/synthetic.ts, aged with the engine's density
 * model) uploaded as the upload island does, and a wait until the worker has analysed them and
 * the batch has settled (pooling included, so no version changes under the test).
 */
import { AGEING_MODELS, syntheticScan, type Ageing } from '../../../src/lib/demo/synthetic.ts';
import type { Client } from '../../support/http.ts';

/** Three kinds of print a drawer holds: barely faded, kept in the dark, hung in the light. Invented for the tests. */
export const REVIEW_AGEINGS: Ageing[] = [AGEING_MODELS.darkStorage(0.25), AGEING_MODELS.darkStorage(1), AGEING_MODELS.lightFaded(0.8)];

/** `count` faded 600x400 JPEG scans with a white border. */
export async function fadedScans(count: number, firstSeed = 11, size = { width: 600, height: 400 }) {
  const out: { name: string; bytes: Buffer }[] = [];
  for (let i = 0; i < count; i++) {
    const seed = firstSeed + i;
    const bytes = await syntheticScan({ ...size, seed, border: true, ageing: REVIEW_AGEINGS[i % REVIEW_AGEINGS.length], format: 'jpeg', quality: 92 });
    out.push({ name: `drawer-${String(seed).padStart(3, '0')}.jpg`, bytes });
  }
  return out;
}

/** Creates a batch, uploads the scans and waits until every print is ready and the batch has settled. */
export async function readyBatch(client: Client, name: string, scans: { name: string; bytes: Buffer }[], timeoutMs = 180_000) {
  const created = await client.post('/api/batches', { name, sourceKind: 'drawer', sourceLabel: 'Hall dresser, top drawer' });
  if (created.status !== 201) throw new Error(`creating a batch answered ${created.status}: ${created.text}`);
  const batchId = created.body.id as string;
  for (const s of scans) {
    const r = await client.request('POST', `/api/batches/${batchId}/files`, {
      body: new Uint8Array(s.bytes),
      headers: { 'content-type': 'application/octet-stream', 'x-file-name': encodeURIComponent(s.name) },
    });
    if (r.status !== 201) throw new Error(`uploading ${s.name} answered ${r.status}: ${r.text}`);
  }
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const b = await client.get(`/api/batches/${batchId}`);
    if (b.status === 200 && b.body.settled && b.body.finishedNotifiedAt) break;
    await new Promise((res) => setTimeout(res, 400));
  }
  const items = await client.get(`/api/batches/${batchId}/items`);
  const list = items.body.items as { id: string; seq: number; state: string; fadeGrade: string }[];
  if (list.length !== scans.length || list.some((i) => i.state !== 'ready')) throw new Error(`batch ${batchId} not ready in time: ${JSON.stringify(list.map((i) => i.state))}`);
  return { batchId, items: list.sort((a, b) => a.seq - b.seq) };
}

/** Polls an item until its newest render is `version`. */
export async function waitRendered(client: Client, itemId: string, version: number, timeoutMs = 90_000) {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const r = await client.get(`/api/items/${itemId}`);
    if (r.body?.item?.renderVersion >= version) return r.body.item;
    await new Promise((res) => setTimeout(res, 300));
  }
  throw new Error(`item ${itemId} was not rendered at version ${version} in time`);
}
