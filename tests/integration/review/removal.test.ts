/**
 * Removing, moving and restoring prints and batches through the real web server, database,
 * storage and worker; the purge of what was removed more than 30 days ago, run by the worker.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AuditEvent, Batch, Item, Original, closeDb, db } from '../../../db/index.ts';
import { PURGE_REMOVED_QUEUE } from '../../../jobs/purge-removed.ts';
import { queue, stopQueue } from '../../../src/lib/server/queue.ts';
import { storage } from '../../../src/lib/server/storage.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import type { Client } from '../../support/http.ts';
import { until } from '../../support/until.ts';
import { fadedScans, readyBatch } from './helpers.ts';

let archive: TestArchive;
let editor: Client;
let viewer: Client;
let scans: { name: string; bytes: Buffer }[];
let batchId: string;
let items: { id: string; seq: number }[];
let otherId: string;

beforeAll(async () => {
  archive = await makeArchive('removal');
  editor = asToken(archive.editor);
  viewer = asToken(archive.viewer);
  scans = await fadedScans(5, 501);
  ({ batchId, items } = await readyBatch(editor, 'Sideboard drawer', scans));
  otherId = (await editor.post('/api/batches', { name: 'Red album', sourceKind: 'album', sourceLabel: 'Red album' })).body.id;
}, 240_000);
afterAll(async () => {
  await stopQueue();
  await closeDb();
});

const listed = async (id: string) => ((await editor.get(`/api/batches/${id}/items`)).body.items as { id: string; seq: number }[]).map((i) => i.id);
const originalKey = async (itemId: string) => {
  const it = await Item.findByPk(itemId, { paranoid: false });
  return (await Original.findByPk(it!.originalId))!.storageKey;
};

describe('removing a print', () => {
  it('says what would go, refuses without a confirmation and changes nothing', async () => {
    const id = items[0].id;
    await editor.post(`/api/items/${id}/decision`, { decision: 'accepted', lockVersion: (await editor.get(`/api/items/${id}`)).body.item.lockVersion });
    await editor.patch(`/api/items/${id}/metadata`, { caption: 'Uncle Pat at the gate' });
    const summary = await editor.get(`/api/items/${id}/removal`);
    expect(summary.body).toMatchObject({ prints: 1, decided: 1, captioned: 1 });
    const refused = await editor.post(`/api/items/${id}/removal`, {});
    expect(refused.status).toBe(400);
    expect(refused.body.error.fields.confirm).toMatch(/confirm/);
    expect(await listed(batchId)).toContain(id);
    const byViewer = await viewer.post(`/api/items/${id}/removal`, { confirm: true });
    expect(byViewer.status).toBe(403);
    expect(await Item.findByPk(id)).not.toBeNull();
  });

  it('takes the print out of every list at once, keeps its original scan, and lists it under Recently removed', async () => {
    const id = items[0].id;
    const key = await originalKey(id);
    const r = await editor.post(`/api/items/${id}/removal`, { confirm: true });
    expect(r.status).toBe(200);
    expect(new Date(r.body.purgeAfter).getTime() - new Date(r.body.removedAt).getTime()).toBe(30 * 86_400_000);
    expect(await listed(batchId)).not.toContain(id);
    expect((await editor.get(`/api/items/${id}`)).status).toBe(404);
    expect((await editor.get(`/api/batches/${batchId}`)).body.counts.total).toBe(items.length - 1);
    expect((await editor.get(`/api/batches/${batchId}/metadata`)).body.items.map((i: { id: string }) => i.id)).not.toContain(id);
    expect(await storage().exists(key)).toBe(true);
    const removed = await editor.get('/api/removed');
    expect(removed.body.removed).toEqual([expect.objectContaining({ kind: 'print', id, seq: items[0].seq, batchName: 'Sideboard drawer' })]);
    expect(await AuditEvent.count({ where: { action: 'item.remove', subjectId: id } })).toBe(1);
  });

  it('restores it with its number, decision and caption', async () => {
    const id = items[0].id;
    const r = await editor.post('/api/removed', { kind: 'print', id });
    expect(r.status).toBe(200);
    expect(r.body.item).toMatchObject({ id, batchId, seq: items[0].seq });
    expect(await listed(batchId)).toContain(id);
    const back = await Item.findByPk(id);
    expect(back).toMatchObject({ decision: 'accepted', caption: 'Uncle Pat at the gate' });
    expect((await editor.get('/api/removed')).body.removed).toEqual([]);
  });
});

describe('moving a print to another batch', () => {
  it('gives it the next number there, with its decision and caption', async () => {
    const id = items[0].id;
    const r = await editor.post(`/api/items/${id}/move`, { batchId: otherId });
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ batchId: otherId, seq: 1 });
    expect(await listed(batchId)).not.toContain(id);
    expect(await listed(otherId)).toEqual([id]);
    expect(await Item.findByPk(id)).toMatchObject({ batchId: otherId, decision: 'accepted', caption: 'Uncle Pat at the gate' });
    const moved = await AuditEvent.findOne({ where: { action: 'item.move', subjectId: id } });
    expect(moved!.details).toMatchObject({ from: { batchId, seq: items[0].seq }, to: { batchId: otherId, seq: 1 } });
  });

  it('refuses a batch of another archive or none, and leaves the print where it is', async () => {
    const id = items[1].id;
    const stranger = await makeArchive('removal-other');
    const foreign = await asToken(stranger.editor).post('/api/batches', { name: 'Not yours', sourceKind: 'box' });
    expect((await editor.post(`/api/items/${id}/move`, { batchId: foreign.body.id })).status).toBe(404);
    expect((await editor.post(`/api/items/${id}/move`, { batchId: 'nowhere' })).status).toBe(400);
    expect((await Item.findByPk(id))!.batchId).toBe(batchId);
  });
});

describe('removing a batch', () => {
  let throwaway: string;
  let throwawayItems: { id: string; seq: number }[];
  beforeAll(async () => {
    ({ batchId: throwaway, items: throwawayItems } = await readyBatch(editor, 'Test batch', await fadedScans(2, 601)));
    // one print removed on its own first: restoring the batch must not bring it back
    await editor.post(`/api/items/${throwawayItems[0].id}/removal`, { confirm: true });
  }, 240_000);

  it('says what goes, then removes the batch and its prints; the name is free again; restoring brings back what went with it', async () => {
    const summary = await editor.get(`/api/batches/${throwaway}/removal`);
    expect(summary.body).toMatchObject({ name: 'Test batch', prints: 1 });
    expect((await editor.post(`/api/batches/${throwaway}/removal`, { confirm: false })).status).toBe(400);
    expect(await Batch.findByPk(throwaway)).not.toBeNull();

    const r = await editor.post(`/api/batches/${throwaway}/removal`, { confirm: true });
    expect(r.status).toBe(200);
    expect(r.body.prints).toBe(1);
    expect((await editor.get(`/api/batches/${throwaway}`)).status).toBe(404);
    expect(((await editor.get('/api/batches')).body.batches as { id: string }[]).map((b) => b.id)).not.toContain(throwaway);
    const removed = (await editor.get('/api/removed')).body.removed as { kind: string; id: string; prints: number }[];
    expect(removed.find((e) => e.id === throwaway)).toMatchObject({ kind: 'batch', prints: 1 });
    // the print removed on its own before is under its removed batch now, not listed apart
    expect(removed.some((e) => e.id === throwawayItems[0].id)).toBe(false);

    const again = await editor.post('/api/batches', { name: 'Test batch', sourceKind: 'box' });
    expect(again.status).toBe(201);

    const back = await editor.post('/api/removed', { kind: 'batch', id: throwaway });
    expect(back.body.batch).toMatchObject({ id: throwaway, name: 'Test batch (restored)', prints: 1 });
    expect(await listed(throwaway)).toEqual([throwawayItems[1].id]);
  });
});

describe('the purge of what was removed 30 days ago', () => {
  it('deletes the rows and the original scan, but keeps an original another print still holds', async () => {
    // print 3 is removed and its scan uploaded again into the batch: the new print holds the same original
    const shared = items[2];
    const sharedKey = await originalKey(shared.id);
    await editor.post(`/api/items/${shared.id}/removal`, { confirm: true });
    const again = await editor.request('POST', `/api/batches/${batchId}/files`, {
      body: new Uint8Array(scans[2].bytes),
      headers: { 'content-type': 'application/octet-stream', 'x-file-name': encodeURIComponent(scans[2].name) },
    });
    expect(again.status).toBe(201);
    expect(again.body.item.id).not.toBe(shared.id);
    // print 4 is removed and nothing else holds its scan
    const alone = items[3];
    const aloneKey = await originalKey(alone.id);
    await editor.post(`/api/items/${alone.id}/removal`, { confirm: true });
    // print 5 was removed only yesterday: it stays
    const recent = items[4];
    await editor.post(`/api/items/${recent.id}/removal`, { confirm: true });

    await db().query(`UPDATE items SET deleted_at = now() - interval '31 days' WHERE id IN (:ids)`, { replacements: { ids: [shared.id, alone.id] } });
    await db().query(`UPDATE items SET deleted_at = now() - interval '29 days' WHERE id = :id`, { replacements: { id: recent.id } });
    const boss = await queue();
    const job = await boss.send(PURGE_REMOVED_QUEUE.name, {});
    // the whole purge, files included, not only its rows: wait for the job to finish
    let state = 'created';
    await until('the purge job to finish', async () => (state = (await boss.getJobById(PURGE_REMOVED_QUEUE.name, job!))?.state ?? 'gone') === 'completed', 60_000, () => state);

    expect(await Item.count({ where: { id: [shared.id, alone.id] }, paranoid: false })).toBe(0);
    expect(await storage().exists(aloneKey)).toBe(false);
    expect(await Original.count({ where: { storageKey: aloneKey } })).toBe(0);
    expect(await storage().exists(sharedKey)).toBe(true);
    expect(await Item.findByPk(recent.id, { paranoid: false })).not.toBeNull();
    const recentKey = await originalKey(recent.id);
    expect(await storage().exists(recentKey)).toBe(true);
    const removed = ((await editor.get('/api/removed')).body.removed as { id: string }[]).map((e) => e.id);
    expect(removed).toContain(recent.id);
    expect(removed).not.toContain(shared.id);
    expect(removed).not.toContain(alone.id);
  }, 90_000);
});
