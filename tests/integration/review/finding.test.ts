/**
 * Finding prints in a batch through the real web server and database: the items API a page at a
 * time, search over captions, people, places, the back of the print and the envelope, the filters
 * for what is still missing, the batch table's rows with the batch's tally, and refusals of a bad
 * query. Captions, people and places are invented for the test.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import type { Client } from '../../support/http.ts';
import { fadedScans, readyBatch } from './helpers.ts';

let archive: TestArchive;
let editor: Client;
let viewer: Client;
let batchId: string;
let otherBatchId: string;
let items: { id: string; seq: number }[];
/** Print numbers by the role they play in the test. */
const P = { picnic: 1, bicycle: 2, lake: 3, tin: 4, bare: 5, moved: 6 };

beforeAll(async () => {
  archive = await makeArchive('finding');
  editor = asToken(archive.editor);
  viewer = asToken(archive.viewer);
  ({ batchId, items } = await readyBatch(editor, 'Sideboard drawer', await fadedScans(6, 701)));
  otherBatchId = (await editor.post('/api/batches', { name: 'Red album', sourceKind: 'album', sourceLabel: 'Red album' })).body.id;
  const meta: Record<number, Record<string, unknown>> = {
    [P.picnic]: { caption: 'Picnic at Lough Arrow', people: ['Máire', 'Tom Byrne'], place: 'Sligo', dateEdtf: '1981' },
    [P.bicycle]: { caption: 'Zoë and her first bicycle', backText: 'Kodak paper · 100% rag · developed August 1983' },
    [P.lake]: { place: 'Lough Key', people: ['Tom Byrne'] },
    [P.tin]: { envelope: 'Blue biscuit tin', dateEdtf: '198X' },
    [P.moved]: { caption: 'Lough Arrow again, from the boat', people: ['Máire'] },
  };
  for (const [seq, body] of Object.entries(meta)) {
    const r = await editor.request('PATCH', `/api/items/${items[Number(seq) - 1].id}/metadata`, { json: body });
    if (r.status !== 200) throw new Error(`captioning print ${seq} answered ${r.status}: ${r.text}`);
  }
  // a print of another batch with the same words must never turn up in this batch's search
  const moved = await editor.post(`/api/items/${items[P.moved - 1].id}/move`, { batchId: otherBatchId });
  if (moved.status !== 200) throw new Error(`moving print 6 answered ${moved.status}: ${moved.text}`);
}, 240_000);
afterAll(async () => {
  await closeDb();
});

const seqsOf = (list: { id: string }[]) => list.map((i) => items.find((x) => x.id === i.id)?.seq);
async function found(query: string, as: Client = editor): Promise<number[]> {
  const r = await as.get(`/api/batches/${batchId}/items?${query}`);
  expect(r.status, r.text).toBe(200);
  return seqsOf(r.body.items) as number[];
}

describe('the items of a batch, a page at a time', () => {
  it('gives one page with the total and the address of the next, and the pages together hold every print once, in order', async () => {
    const seen: number[] = [];
    let next: string | null = `/api/batches/${batchId}/items?per=2`;
    let pages = 0;
    while (next) {
      const r: { status: number; text: string; body: any } = await editor.get(next);
      expect(r.status, r.text).toBe(200);
      expect(r.body.items.length).toBeLessThanOrEqual(2);
      expect(r.body).toMatchObject({ total: 5, per: 2, pages: 3, page: pages + 1 });
      seen.push(...(seqsOf(r.body.items) as number[]));
      next = r.body.next;
      pages++;
    }
    expect(pages).toBe(3);
    expect(seen).toEqual([1, 2, 3, 4, 5]);
  });

  it('sends 100 items at most when the caller does not say, and a page past the last is empty but still counts them', async () => {
    const r = await editor.get(`/api/batches/${batchId}/items`);
    expect(r.body).toMatchObject({ total: 5, per: 100, pages: 1, next: null });
    const past = await editor.get(`/api/batches/${batchId}/items?page=9&per=2`);
    expect(past.status).toBe(200);
    expect(past.body).toMatchObject({ items: [], total: 5, page: 9, next: null });
  });
});

describe('search', () => {
  it('finds words in captions, places, people, the back of the print and the envelope, in any letter case', async () => {
    expect(await found('q=lough')).toEqual([P.picnic, P.lake]);
    expect(await found('q=LOUGH+arrow')).toEqual([P.picnic]);
    expect(await found('q=tom')).toEqual([P.picnic, P.lake]);
    expect(await found(`q=${encodeURIComponent('MÁIRE')}`)).toEqual([P.picnic]);
    expect(await found('q=kodak')).toEqual([P.bicycle]);
    expect(await found('q=biscuit')).toEqual([P.tin]);
    expect(await found('q=sligo')).toEqual([P.picnic]);
  });

  it('takes % and _ as the letters they are, not as wildcards', async () => {
    expect(await found(`q=${encodeURIComponent('100%')}`)).toEqual([P.bicycle]);
    expect(await found(`q=${encodeURIComponent('%')}`)).toEqual([P.bicycle]);
    expect(await found('q=_')).toEqual([]);
  });

  it("lets a viewer search too, and never shows another batch's prints", async () => {
    expect(await found('q=boat', viewer)).toEqual([]);
    const other = await editor.get(`/api/batches/${otherBatchId}/items?q=boat`);
    expect(other.body.items.map((i: { id: string }) => i.id)).toEqual([items[P.moved - 1].id]);
  });

  it('finds a print by its number (print 1 of the other batch, whose words hold no 1)', async () => {
    const byNumber = async (n: number) => (await editor.get(`/api/batches/${otherBatchId}/items?q=${n}`)).body.items.map((i: { seq: number }) => i.seq);
    expect(await byNumber(1)).toEqual([1]);
    expect(await byNumber(2)).toEqual([]);
  });
});

describe('what is still missing', () => {
  it('filters prints with no caption, no date or no people yet, and combines them with each other, the search and the pages', async () => {
    expect(await found('missing=caption')).toEqual([P.lake, P.tin, P.bare]);
    expect(await found('missing=date')).toEqual([P.bicycle, P.lake, P.bare]);
    expect(await found('missing=people')).toEqual([P.bicycle, P.tin, P.bare]);
    expect(await found('missing=caption,people')).toEqual([P.tin, P.bare]);
    expect(await found('missing=caption&missing=date')).toEqual([P.lake, P.bare]);
    expect(await found('missing=caption&q=lough')).toEqual([P.lake]);
    const second = await editor.get(`/api/batches/${batchId}/items?missing=caption&per=2&page=2`);
    expect(second.body).toMatchObject({ total: 3, pages: 2, next: null });
    expect(seqsOf(second.body.items)).toEqual([P.bare]);
  });

  it('counts a caption cleared back to empty as missing again', async () => {
    const id = items[P.bicycle - 1].id;
    await editor.request('PATCH', `/api/items/${id}/metadata`, { json: { caption: '' } });
    expect(await found('missing=caption')).toEqual([P.bicycle, P.lake, P.tin, P.bare]);
    await editor.request('PATCH', `/api/items/${id}/metadata`, { json: { caption: 'Zoë and her first bicycle' } });
    expect(await found('missing=caption')).toEqual([P.lake, P.tin, P.bare]);
  });
});

describe('the batch table rows', () => {
  it('carry the batch tally, which follows a bulk decision, and the decision filter and order work on the server', async () => {
    const before = await editor.get(`/api/batches/${batchId}/items?view=rows`);
    expect(before.body.tally).toEqual({ prints: 5, reviewable: 5, decided: 0, captioned: 2, dated: 2 });
    expect(before.body.firstToReview).toBe(items[0].id);
    expect(before.body.items[0]).toMatchObject({ seq: 1, caption: 'Picnic at Lough Arrow', decision: null });

    const pick = (before.body.items as { id: string; seq: number; lockVersion: number }[]).filter((r) => r.seq === P.picnic || r.seq === P.lake);
    const decided = await editor.post(`/api/batches/${batchId}/decisions`, { decision: 'accepted', items: pick.map((r) => ({ id: r.id, lockVersion: r.lockVersion })) });
    expect(decided.status, decided.text).toBe(200);

    const after = await editor.get(`/api/batches/${batchId}/items?view=rows&decision=undecided`);
    expect(after.body.tally).toMatchObject({ decided: 2 });
    expect(seqsOf(after.body.items)).toEqual([P.bicycle, P.tin, P.bare]);
    expect(after.body.firstToReview).toBe(items[P.bicycle - 1].id);
    expect(seqsOf((await editor.get(`/api/batches/${batchId}/items?view=rows&sort=decision`)).body.items)).toEqual([P.bicycle, P.tin, P.bare, P.picnic, P.lake]);
  });

  it('gives every match with its lockVersion at once for selecting them all', async () => {
    const r = await editor.get(`/api/batches/${batchId}/items?view=ids&missing=people&per=1`);
    expect(r.status).toBe(200);
    expect(r.body.items.map((i: { seq: number }) => i.seq)).toEqual([P.bicycle, P.tin, P.bare]);
    expect(r.body.items.every((i: { lockVersion: unknown }) => typeof i.lockVersion === 'number')).toBe(true);
  });
});

describe('a query that cannot be answered', () => {
  it('is a 400 naming the parameter, for an unknown order, too many per page or a parameter we do not know', async () => {
    for (const [query, field] of [
      ['sort=colour', 'sort'],
      ['per=501', 'per'],
      ['page=0', 'page'],
      ['missing=caption,faces', 'missing'],
      ['decison=accepted', ''],
    ] as const) {
      const r = await editor.get(`/api/batches/${batchId}/items?${query}`);
      expect(r.status, query).toBe(400);
      expect(r.body.error.code).toBe('invalid_input');
      if (field) expect(Object.keys(r.body.error.fields ?? {}).join(' '), query).toContain(field);
    }
  });

  it('is a 404 for another archive, whatever it searches for', async () => {
    const other = await makeArchive('finding-other');
    const r = await asToken(other.owner).get(`/api/batches/${batchId}/items?q=lough`);
    expect(r.status).toBe(404);
    expect(JSON.stringify(r.body)).not.toContain('Lough');
  });
});
