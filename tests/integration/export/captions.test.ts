import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { batchWithPrints } from './helpers.ts';

let a: TestArchive;
let other: TestArchive;
let batchId: string;
let items: string[];

beforeAll(async () => {
  a = await makeArchive('captions');
  other = await makeArchive('captions-other');
  ({ batchId, itemIds: items } = await batchWithPrints(asToken(a.editor), 'Captions box', 3, 11));
});
afterAll(() => closeDb());

describe('captions, dates and people', () => {
  it('saves a caption with an EDTF date shown in words, and people reused across the archive', async () => {
    const editor = asToken(a.editor);
    const r = await editor.patch(`/api/items/${items[0]}/metadata`, { caption: 'Zoë and Łukasz at the lake', dateEdtf: '1981~', place: 'Lough Arrow', people: ['Zoë Hartigan', 'Łukasz Brennan'], backText: 'Summer 81 — with love', envelope: 'Envelope "Holidays"' });
    expect(r.status).toBe(200);
    // "about 1981": the Library of Congress EDTF meaning of "~" (approximate).
    expect(r.body).toMatchObject({ caption: 'Zoë and Łukasz at the lake', dateEdtf: '1981~', dateWords: 'about 1981', place: 'Lough Arrow', people: ['Zoë Hartigan', 'Łukasz Brennan'], source: { kind: 'box', label: 'Shoebox 1' } });
    const r2 = await editor.patch(`/api/items/${items[1]}/metadata`, { people: ['zoë hartigan'] });
    expect(r2.body.people).toEqual(['Zoë Hartigan']);
    const people = await editor.get('/api/people?q=zo');
    expect(people.body.people).toEqual([expect.objectContaining({ name: 'Zoë Hartigan', prints: 2 })]);
  });

  it('refuses a date it cannot read, as EDTF or as words, with a message naming the field, and changes nothing', async () => {
    const editor = asToken(a.editor);
    const r = await editor.patch(`/api/items/${items[0]}/metadata`, { caption: 'changed', dateEdtf: 'the summer Gran visited' });
    expect(r.status).toBe(400);
    expect(r.body.error.fields.dateEdtf).toMatch(/not a date we can read/);
    expect((await editor.get(`/api/items/${items[0]}/metadata`)).body.caption).toBe('Zoë and Łukasz at the lake');
  });

  it('gives a selection the same date and place in one step, all or nothing', async () => {
    const editor = asToken(a.editor);
    const ok = await editor.patch(`/api/batches/${batchId}/metadata`, { itemIds: [items[1], items[2]], set: { dateEdtf: '1981-22', place: 'Sligo' } });
    expect(ok.status).toBe(200);
    expect(ok.body.items.map((i: any) => [i.dateWords, i.place])).toEqual([['summer 1981', 'Sligo'], ['summer 1981', 'Sligo']]);
    const bad = await editor.patch(`/api/batches/${batchId}/metadata`, { itemIds: [items[0], '00000000-0000-4000-8000-000000000000'], set: { place: 'Nowhere' } });
    expect(bad.status).toBe(400);
    expect((await editor.get(`/api/items/${items[0]}/metadata`)).body.place).toBe('Lough Arrow');
  });

  it('lets viewers read and suggest but not edit; another archive sees nothing (404)', async () => {
    expect((await asToken(a.viewer).get(`/api/items/${items[0]}/metadata`)).status).toBe(200);
    expect((await asToken(a.viewer).patch(`/api/items/${items[0]}/metadata`, { caption: 'x' })).status).toBe(403);
    expect((await asToken(other.owner).get(`/api/items/${items[0]}/metadata`)).status).toBe(404);
    expect((await asToken(other.owner).patch(`/api/batches/${batchId}/metadata`, { itemIds: [items[0]], set: { place: 'x' } })).status).toBe(404);
    expect((await asToken(a.viewer).patch(`/api/batches/${batchId}/metadata`, { itemIds: [items[0]], set: { place: 'x' } })).status).toBe(403);
  });
});

describe('suggestions from viewers', () => {
  it('goes from a viewer to an editor, who accepts one (applied) and declines another (not applied)', async () => {
    const viewer = asToken(a.viewer);
    const editor = asToken(a.editor);
    const s1 = await viewer.post(`/api/items/${items[2]}/suggestions`, { caption: 'Granny Ó Briain feeding the swans', people: ['Máire Ó Briain'], note: 'I was there' });
    expect(s1.status).toBe(201);
    expect(s1.headers.get('location')).toBe(`/api/suggestions/${s1.body.id}`);
    const s2 = await viewer.post(`/api/items/${items[2]}/suggestions`, { dateEdtf: '1979' });
    expect((await viewer.post(`/api/suggestions/${s1.body.id}`, { decision: 'accept' })).status).toBe(403);

    const pending = await editor.get(`/api/items/${items[2]}/suggestions?state=pending`);
    expect(pending.body.suggestions.map((s: any) => s.id)).toEqual([s1.body.id, s2.body.id]);
    const accepted = await editor.post(`/api/suggestions/${s1.body.id}`, { decision: 'accept' });
    expect(accepted.body.state).toBe('accepted');
    const declined = await editor.post(`/api/suggestions/${s2.body.id}`, { decision: 'decline' });
    expect(declined.body.state).toBe('declined');
    expect((await editor.post(`/api/suggestions/${s2.body.id}`, { decision: 'accept' })).status).toBe(409);

    const meta = (await editor.get(`/api/items/${items[2]}/metadata`)).body;
    expect(meta.caption).toBe('Granny Ó Briain feeding the swans');
    expect(meta.people).toContain('Máire Ó Briain');
    expect(meta.dateEdtf).toBe('1981-22');
  });

  it('refuses an empty suggestion and a bad date with clear messages', async () => {
    const viewer = asToken(a.viewer);
    const empty = await viewer.post(`/api/items/${items[0]}/suggestions`, {});
    expect(empty.status).toBe(400);
    expect(JSON.stringify(empty.body.error.fields)).toMatch(/at least/);
    const bad = await viewer.post(`/api/items/${items[0]}/suggestions`, { dateEdtf: 'summer 05' });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields.dateEdtf).toBeTruthy();
    expect((await asToken(other.viewer).post(`/api/items/${items[0]}/suggestions`, { caption: 'x' })).status).toBe(404);
  });
});
