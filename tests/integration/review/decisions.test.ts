/**
 * Decisions through the real web server, database and worker: optimistic concurrency between two
 * operators, roles, bad input, bulk decisions and the audit log.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { AuditEvent, Item, closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import type { Client } from '../../support/http.ts';
import { fadedScans, readyBatch } from './helpers.ts';
import { formatWhen } from '../../../src/lib/archive/when.ts';

let archive: TestArchive;
let editor: Client;
let owner: Client;
let viewer: Client;
let batchId: string;
let items: { id: string; seq: number; fadeGrade: string }[];

beforeAll(async () => {
  archive = await makeArchive('review-decide');
  editor = asToken(archive.editor);
  owner = asToken(archive.owner);
  viewer = asToken(archive.viewer);
  ({ batchId, items } = await readyBatch(editor, 'Hall dresser', await fadedScans(6)));
});
afterAll(closeDb);

const detail = async (c: Client, id: string) => (await c.get(`/api/items/${id}`)).body.item;

describe('deciding a print', () => {
  it('gives the later of two operators deciding the same print a 409 naming who decided and when, and keeps the first decision', async () => {
    const id = items[0].id;
    const seenByEditor = await detail(editor, id);
    const seenByOwner = await detail(owner, id);
    expect(seenByOwner.lockVersion).toBe(seenByEditor.lockVersion);

    const first = await editor.post(`/api/items/${id}/decision`, { decision: 'accepted', lockVersion: seenByEditor.lockVersion });
    expect(first.status).toBe(200);
    expect(first.body.item.decision).toBe('accepted');

    const later = await owner.post(`/api/items/${id}/decision`, { decision: 'rescan', lockVersion: seenByOwner.lockVersion, negativeAvailable: 'yes', negativeLocation: 'sleeve 3' });
    expect(later.status).toBe(409);
    expect(later.body.error.code).toBe('stale_print');
    expect(later.body.error.message).toContain(`editor ${archive.slug}`);
    // the time of the first decision, as its reply gave it
    const decidedAt = first.body.item.decidedAt as string;
    expect(later.body.error.fields.decidedBy).toBe(`editor ${archive.slug}`);
    expect(later.body.error.fields.decidedAt).toBe(decidedAt);
    // written as everywhere in the product, in the archive's time zone (UTC unless set), named
    expect(later.body.error.message).toContain(`already decided this print (Accepted) on ${formatWhen(decidedAt, 'UTC')} (UTC)`);

    const now = await detail(viewer, id);
    expect(now.decision).toBe('accepted');
    expect(now.decidedBy.id).toBe(archive.editor.id);
    expect(now.negativeLocation).toBeNull();
    expect(await AuditEvent.count({ where: { subjectId: id, action: 'item.decide' } })).toBe(1);
  });

  it('lets the owner decide again once they have loaded the current state', async () => {
    const id = items[0].id;
    const fresh = await detail(owner, id);
    const again = await owner.request('PUT', `/api/items/${id}/decision`, { json: { decision: 'rescan', lockVersion: fresh.lockVersion, negativeAvailable: 'yes', negativeLocation: 'envelope "Easter 1982"', rescanNote: 'frames 8-10' } });
    expect(again.status).toBe(200);
    expect(again.body.item).toMatchObject({ decision: 'rescan', negativeAvailable: 'yes', negativeLocation: 'envelope "Easter 1982"', rescanNote: 'frames 8-10', lockVersion: fresh.lockVersion + 1 });
    const audit = await AuditEvent.findAll({ where: { subjectId: id, action: 'item.decide' }, order: [['id', 'ASC']] });
    expect(audit.map((a) => a.details.decision)).toEqual(['accepted', 'rescan']);
    expect(audit[1].details).toMatchObject({ previous: { decision: 'accepted', decidedBy: archive.editor.id }, negativeLocation: 'envelope "Easter 1982"' });
    expect(audit[1].actorId).toBe(archive.owner.id);
  });

  it('refuses a viewer with 403 and changes nothing, while the viewer may still look', async () => {
    const id = items[1].id;
    const seen = await detail(viewer, id);
    expect(seen.analysis.paperBase).toBeTruthy();
    const r = await viewer.post(`/api/items/${id}/decision`, { decision: 'accepted', lockVersion: seen.lockVersion });
    expect(r.status).toBe(403);
    expect(r.body.error.code).toBe('forbidden');
    const bulk = await viewer.post(`/api/batches/${batchId}/decisions`, { decision: 'accepted', items: [{ id, lockVersion: seen.lockVersion }] });
    expect(bulk.status).toBe(403);
    const save = await viewer.post(`/api/items/${id}/corrections`, { params: seen.current });
    expect(save.status).toBe(403);
    const after = await Item.findByPk(id);
    expect(after!.decision).toBeNull();
    expect(after!.lockVersion).toBe(seen.lockVersion);
  });

  it("answers 404 for another archive's print, as if it did not exist", async () => {
    const other = await makeArchive('review-other');
    const r = await asToken(other.owner).get(`/api/items/${items[1].id}`);
    expect(r.status).toBe(404);
    const d = await asToken(other.owner).post(`/api/items/${items[1].id}/decision`, { decision: 'accepted', lockVersion: 0 });
    expect(d.status).toBe(404);
  });

  it('refuses bad decisions with a clear 400 and loses nothing', async () => {
    const id = items[1].id;
    const seen = await detail(editor, id);
    const cases: [unknown, string][] = [
      [{ decision: 'keep', lockVersion: seen.lockVersion }, 'decision'],
      [{ decision: 'accepted' }, 'lockVersion'],
      [{ decision: 'accepted', lockVersion: seen.lockVersion, negativeLocation: 'box 2' }, 'decision'],
      [{ decision: 'rescan', lockVersion: seen.lockVersion, negativeAvailable: 'maybe' }, 'negativeAvailable'],
      [{ decision: 'rescan', lockVersion: seen.lockVersion, negativeLocation: 'x'.repeat(301) }, 'negativeLocation'],
      [{ decision: 'accepted_adjusted', lockVersion: seen.lockVersion, correction: { ...seen.current, strength: 2 } }, 'correction.strength'],
    ];
    for (const [body, field] of cases) {
      const r = await editor.post(`/api/items/${id}/decision`, body);
      expect(r.status, JSON.stringify(body)).toBe(400);
      expect(r.body.error.code).toBe('invalid_input');
      expect(Object.keys(r.body.error.fields ?? {})).toContain(field);
    }
    const notJson = await editor.request('POST', `/api/items/${id}/decision`, { body: 'accept', headers: { 'content-type': 'text/plain' } });
    expect(notJson.status).toBe(400);
    // accepting "with changes" when nothing was changed is refused, not silently turned into a plain accept
    const noChange = await editor.post(`/api/items/${id}/decision`, { decision: 'accepted_adjusted', lockVersion: seen.lockVersion });
    expect(noChange.status).toBe(400);
    expect(noChange.body.error.message).toMatch(/needs a change/);
    const after = await detail(editor, id);
    expect(after.decision).toBeNull();
    expect(after.lockVersion).toBe(seen.lockVersion);
  });

  it('accepts with adjustments in one step: the correction becomes a new operator version and its render is queued', async () => {
    const id = items[2].id;
    const seen = await detail(editor, id);
    const adjusted = { ...seen.current, strength: 0.8 };
    const r = await editor.post(`/api/items/${id}/decision`, { decision: 'accepted_adjusted', lockVersion: seen.lockVersion, correction: adjusted });
    expect(r.status).toBe(202);
    expect(r.body.queuedRender).toBe(seen.currentVersion + 1);
    expect(r.body.item.decision).toBe('accepted_adjusted');
    expect(r.body.item.currentVersion).toBe(seen.currentVersion + 1);
    expect(r.body.item.current).toEqual(adjusted);
    expect(r.body.item.corrections.at(-1)).toMatchObject({ origin: 'operator', createdBy: { id: archive.editor.id } });
    expect(await AuditEvent.count({ where: { subjectId: id, action: 'correction.save' } })).toBe(1);
  });
});

describe('deciding several prints at once', () => {
  it('accepts a selection in one go, leaves a print changed meanwhile alone and says why', async () => {
    const pick = [items[3], items[4], items[5]];
    const seen = await Promise.all(pick.map((i) => detail(editor, i.id)));
    // someone else decides one of them after the selection was loaded
    const meanwhile = await owner.post(`/api/items/${pick[2].id}/decision`, { decision: 'skipped', lockVersion: seen[2].lockVersion });
    expect(meanwhile.status).toBe(200);

    const r = await editor.post(`/api/batches/${batchId}/decisions`, { decision: 'accepted', items: seen.map((s) => ({ id: s.id, lockVersion: s.lockVersion })) });
    expect(r.status).toBe(200);
    expect(r.body.decided.map((d: { id: string }) => d.id).sort()).toEqual([pick[0].id, pick[1].id].sort());
    expect(r.body.conflicts).toHaveLength(1);
    expect(r.body.conflicts[0]).toMatchObject({ id: pick[2].id, code: 'stale_print' });
    expect(r.body.conflicts[0].message).toContain(`owner ${archive.slug}`);
    expect((await detail(editor, pick[2].id)).decision).toBe('skipped');
    for (const d of r.body.decided) expect((await detail(editor, d.id)).lockVersion).toBe(d.lockVersion);
    const audits = await AuditEvent.findAll({ where: { action: 'item.decide', subjectId: [pick[0].id, pick[1].id] } });
    expect(audits).toHaveLength(2);
    expect(audits.every((a) => a.details.bulk === true && a.actorId === archive.editor.id)).toBe(true);
  });

  it('answers 409 when none of the selection could be decided, and 400 for a bad selection', async () => {
    const stale = await editor.post(`/api/batches/${batchId}/decisions`, { decision: 'skipped', items: [{ id: items[3].id, lockVersion: 0 }] });
    expect(stale.status).toBe(409);
    expect(stale.body.error.code).toBe('nothing_decided');
    expect(stale.body.error.fields[items[3].id]).toMatch(/already decided/);
    const bad = [
      { decision: 'accepted', items: [] },
      { decision: 'accepted_adjusted', items: [{ id: items[3].id, lockVersion: 1 }] },
      { decision: 'accepted', items: [{ id: items[3].id, lockVersion: 1 }, { id: items[3].id, lockVersion: 1 }] },
      { decision: 'accepted', items: [{ id: 'not-an-id', lockVersion: 1 }] },
    ];
    for (const body of bad) expect((await editor.post(`/api/batches/${batchId}/decisions`, body)).status, JSON.stringify(body)).toBe(400);
  });
});
