/**
 * Steps shared by the caption, rescan and export tests, all through the real API and worker:
 * a batch, uploaded scans (invented scenes from src/lib/demo/synthetic.ts), waiting for the
 * analysis, decisions.
 */
import { createHash } from 'node:crypto';
import { AGEING_MODELS, syntheticScan } from '../../../src/lib/demo/synthetic.ts';
import type { Client } from '../../support/http.ts';

export const sha256 = (b: Buffer | Uint8Array) => createHash('sha256').update(b).digest('hex');

/** A small aged print scan (600×400 unless told), different bytes per seed. */
export function scan(seed: number, size = { width: 600, height: 400 }): Promise<Buffer> {
  return syntheticScan({ ...size, seed, border: true, ageing: AGEING_MODELS.darkStorage(0.8), format: 'jpeg', quality: 90 });
}

export async function createBatch(client: Client, name: string, source: Record<string, string> = { sourceKind: 'box', sourceLabel: 'Shoebox 1' }): Promise<string> {
  const r = await client.post('/api/batches', { name, ...source });
  if (r.status !== 201) throw new Error(`creating a batch answered ${r.status}: ${r.text}`);
  return r.body.id as string;
}

export async function uploadScan(client: Client, batchId: string, name: string, bytes: Buffer): Promise<string> {
  const r = await client.request('POST', `/api/batches/${batchId}/files`, {
    body: bytes as unknown as BodyInit,
    headers: { 'content-type': 'application/octet-stream', 'x-file-name': encodeURIComponent(name) },
  });
  if (r.status !== 201) throw new Error(`upload answered ${r.status}: ${r.text}`);
  return r.body.item.id as string;
}

/** Waits until the item is analysed and rendered (state ready with a corrected image). */
export async function waitReady(client: Client, itemId: string, timeoutMs = 120_000): Promise<any> {
  const deadline = Date.now() + timeoutMs;
  let last: any;
  while (Date.now() < deadline) {
    const r = await client.get(`/api/items/${itemId}`);
    last = r.body;
    const item = r.body?.item ?? r.body;
    if (r.status === 200 && item?.state === 'ready' && (item.renderVersion ?? item.links?.corrected)) return item;
    if (item?.state === 'failed') throw new Error(`item ${itemId} failed: ${item.failureReason}`);
    await new Promise((res) => setTimeout(res, 400));
  }
  throw new Error(`item ${itemId} not ready in time: ${JSON.stringify(last).slice(0, 300)}`);
}

/** A batch with `n` analysed prints; returns the batch id and item ids in scan order. */
export async function batchWithPrints(client: Client, name: string, n: number, firstSeed = 1): Promise<{ batchId: string; itemIds: string[] }> {
  const batchId = await createBatch(client, name);
  const itemIds: string[] = [];
  for (let i = 0; i < n; i++) itemIds.push(await uploadScan(client, batchId, `scan-${firstSeed + i}.jpg`, await scan(firstSeed + i)));
  for (const id of itemIds) await waitReady(client, id);
  return { batchId, itemIds };
}

async function lockVersion(client: Client, itemId: string): Promise<number> {
  const r = await client.get(`/api/items/${itemId}/metadata`);
  if (r.status !== 200) throw new Error(`metadata answered ${r.status}: ${r.text}`);
  return r.body.lockVersion as number;
}

/** Records a decision through the review API. */
export async function decide(client: Client, itemId: string, decision: string, extra: Record<string, unknown> = {}) {
  const r = await client.post(`/api/items/${itemId}/decision`, { decision, lockVersion: await lockVersion(client, itemId), ...extra });
  if (r.status !== 200 && r.status !== 202) throw new Error(`decision answered ${r.status}: ${r.text}`);
  return r.body;
}

/** Polls an export until it is ready or failed. */
export async function waitExport(client: Client, statusUrl: string, timeoutMs = 180_000): Promise<any> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const r = await client.get(statusUrl);
    if (r.status === 200 && (r.body.state === 'ready' || r.body.state === 'failed')) return r.body;
    await new Promise((res) => setTimeout(res, 500));
  }
  throw new Error(`export ${statusUrl} did not finish in time`);
}

/** Downloads a URL's body as bytes (fetch with the client's credentials). */
export async function downloadBytes(client: Client, path: string): Promise<{ status: number; headers: Headers; bytes: Buffer }> {
  const { BASE } = await import('../../support/http.ts');
  const headers: Record<string, string> = {};
  if (client.token) headers.authorization = `Bearer ${client.token}`;
  const cookie = client.cookieHeader();
  if (cookie) headers.cookie = cookie;
  const res = await fetch(BASE + path, { headers });
  return { status: res.status, headers: res.headers, bytes: Buffer.from(await res.arrayBuffer()) };
}
