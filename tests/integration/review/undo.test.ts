/**
 * Clearing decisions back to "not reviewed yet" and undoing a bulk decision, through the real web
 * server and database; the audit trail keeps every step.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AuditEvent, Item, closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import type { Client } from '../../support/http.ts';
import { fadedScans, readyBatch } from './helpers.ts';

let archive: TestArchive;
let editor: Client;
let owner: Client;
let batchId: string;
let items: { id: string; seq: number }[];

beforeAll(async () => {
  archive = await makeArchive('review-undo');
  editor = asToken(archive.editor);
  owner = asToken(archive.owner);
  ({ batchId, items } = await readyBatch(editor, 'Writing desk', await fadedScans(4, 701)));
}, 240_000);
afterAll(closeDb);

const lockOf = async (id: string) => (await Item.findByPk(id))!.lockVersion;
const pick = async (ids: string[]) => Promise.all(ids.map(async (id) => ({ id, lockVersion: await lockOf(id) })));

describe('undoing a bulk accept', () => {
  it('puts every print back as it was before, the one set aside for rescan with its negative, and records both steps', async () => {
    const [a, b, c] = items;
    const aside = await editor.post(`/api/items/${c.id}/decision`, { decision: 'rescan', lockVersion: await lockOf(c.id), negativeAvailable: 'yes', negativeLocation: 'Sleeve 4, blue box' });
    expect(aside.status).toBe(200);

    const bulk = await editor.post(`/api/batches/${batchId}/decisions`, { decision: 'accepted', items: await pick([a.id, b.id, c.id]) });
    expect(bulk.status).toBe(200);
    expect(bulk.body.decided).toHaveLength(3);
    expect(bulk.body.bulkId).toMatch(/^[0-9a-f-]{36}$/);

    const undo = await editor.post(`/api/batches/${batchId}/decisions/undo`, { bulkId: bulk.body.bulkId });
    expect(undo.status).toBe(200);
    expect(undo.body.decided).toHaveLength(3);
    expect(await Item.findByPk(a.id)).toMatchObject({ decision: null, decidedBy: null, decidedAt: null });
    expect(await Item.findByPk(b.id)).toMatchObject({ decision: null });
    expect(await Item.findByPk(c.id)).toMatchObject({ decision: 'rescan', negativeAvailable: 'yes', negativeLocation: 'Sleeve 4, blue box' });

    const trail = await AuditEvent.findAll({ where: { subjectId: c.id }, order: [['createdAt', 'ASC']] });
    expect(trail.map((e) => e.action).filter((x) => x.startsWith('item.decide'))).toEqual(['item.decide', 'item.decide', 'item.decide.undo']);
  });

  it('refuses to undo the same bulk decision twice, and changes nothing', async () => {
    const [a, b] = items;
    const bulk = await editor.post(`/api/batches/${batchId}/decisions`, { decision: 'skipped', items: await pick([a.id, b.id]) });
    expect((await editor.post(`/api/batches/${batchId}/decisions/undo`, { bulkId: bulk.body.bulkId })).status).toBe(200);
    const before = await lockOf(a.id);
    const twice = await editor.post(`/api/batches/${batchId}/decisions/undo`, { bulkId: bulk.body.bulkId });
    expect(twice.status).toBe(409);
    expect(twice.body.error.code).toBe('already_undone');
    expect(await lockOf(a.id)).toBe(before);
  });

  it('leaves a print decided by someone else since, and says so', async () => {
    const [a, b] = items;
    const bulk = await editor.post(`/api/batches/${batchId}/decisions`, { decision: 'accepted', items: await pick([a.id, b.id]) });
    const since = await owner.post(`/api/items/${b.id}/decision`, { decision: 'skipped', lockVersion: await lockOf(b.id) });
    expect(since.status).toBe(200);
    const undo = await editor.post(`/api/batches/${batchId}/decisions/undo`, { bulkId: bulk.body.bulkId });
    expect(undo.status).toBe(200);
    expect(undo.body.decided.map((d: { id: string }) => d.id)).toEqual([a.id]);
    expect(undo.body.conflicts).toEqual([expect.objectContaining({ id: b.id })]);
    expect(await Item.findByPk(b.id)).toMatchObject({ decision: 'skipped' });
  });

  it('answers an unknown bulk id with 404 and a malformed one with 400', async () => {
    expect((await editor.post(`/api/batches/${batchId}/decisions/undo`, { bulkId: '00000000-0000-4000-8000-000000000000' })).status).toBe(404);
    const bad = await editor.post(`/api/batches/${batchId}/decisions/undo`, { bulkId: 'yesterday' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields.bulkId).toBeTruthy();
  });
});

describe('clearing a decision', () => {
  it('takes prints back to "not reviewed yet", keeping what they were in the audit trail', async () => {
    const d = items[3];
    await editor.post(`/api/items/${d.id}/decision`, { decision: 'accepted', lockVersion: await lockOf(d.id) });
    const cleared = await editor.post(`/api/batches/${batchId}/decisions`, { decision: 'undecided', items: await pick([d.id]) });
    expect(cleared.status).toBe(200);
    expect(cleared.body.decided).toEqual([expect.objectContaining({ id: d.id, decision: null })]);
    expect(await Item.findByPk(d.id)).toMatchObject({ decision: null, decidedBy: null });
    const last = await AuditEvent.findOne({ where: { subjectId: d.id, action: 'item.decide' }, order: [['createdAt', 'DESC']] });
    expect(last!.details).toMatchObject({ decision: null, previous: { decision: 'accepted' } });
    // and the clearing can itself be undone
    const undo = await editor.post(`/api/batches/${batchId}/decisions/undo`, { bulkId: cleared.body.bulkId });
    expect(undo.status).toBe(200);
    expect(await Item.findByPk(d.id)).toMatchObject({ decision: 'accepted' });
  });
});
