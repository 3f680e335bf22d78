/**
 * Text as people type it: one name however its accents were typed (Unicode NFC), no control
 * characters, no date range that ends before it starts; and a refusal for size that gives the real
 * figures. Refusals are checked by what did not change.
 */
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Batch, closeDb } from '../../../db/index.ts';
import { probeScan } from '../../../src/lib/restoration/imaging.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { createBatch, generatedScans, upload } from '../../support/scans.ts';

let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('input-text');
});
afterAll(() => closeDb());

describe('batch names', () => {
  it('keeps "Zoë box" one batch whether the ë was typed as one character or as e and a combining diaeresis', async () => {
    const editor = asToken(a.editor);
    const composed = 'Zo\u00eb box';
    const decomposed = 'Zoe\u0308 box';
    expect(composed).not.toBe(decomposed);
    expect((await editor.post('/api/batches', { name: composed, sourceKind: 'box' })).status).toBe(201);
    const again = await editor.post('/api/batches', { name: decomposed, sourceKind: 'box' });
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('batch_exists');
    const names = (await Batch.findAll({ where: { archiveId: a.id } })).map((b) => b.name);
    expect(names).toEqual([composed]);
  });

  it('refuses control characters in a name or label, and creates nothing', async () => {
    const editor = asToken(a.editor);
    const before = await Batch.count({ where: { archiveId: a.id } });
    for (const body of [
      { name: 'Blue tin\u0007', sourceKind: 'box' },
      { name: 'Blue tin\r\nSet-Cookie: x=1', sourceKind: 'box' },
      { name: 'Blue tin', sourceKind: 'box', sourceLabel: 'Shelf \u001b[31m2' },
      { name: 'Blue\u0085tin', sourceKind: 'box' },
    ]) {
      const r = await editor.post('/api/batches', body);
      expect(r.status, JSON.stringify(body)).toBe(400);
      expect(r.body.error.code).toBe('invalid_input');
      expect(Object.values(r.body.error.fields ?? {}).join(' ')).toMatch(/control characters/);
    }
    expect(await Batch.count({ where: { archiveId: a.id } })).toBe(before);
  });

  it('refuses a date range that ends before it starts, and takes ranges whose uncertain ends overlap', async () => {
    const editor = asToken(a.editor);
    const backwards = await editor.post('/api/batches', { name: 'Backwards', sourceKind: 'box', dateFrom: '1985', dateTo: '1981-07' });
    expect(backwards.status).toBe(400);
    expect(backwards.body.error.fields.dateTo).toMatch(/before the start/);
    expect(await Batch.count({ where: { archiveId: a.id, name: 'Backwards' } })).toBe(0);
    const overlapping = await editor.post('/api/batches', { name: 'The eighties', sourceKind: 'box', dateFrom: '198X', dateTo: '1981~' });
    expect(overlapping.status).toBe(201);
  });
});

describe('captions and people', () => {
  let item: string;
  beforeAll(async () => {
    const editor = asToken(a.editor);
    const batch = await createBatch(editor, 'Caption text');
    const [scan] = await generatedScans(1, 9400, { width: 240, height: 160 });
    const up = await upload(editor, batch, scan.name, scan.bytes);
    if (up.status !== 201) throw new Error(`uploading the print answered ${up.status}: ${up.text}`);
    item = up.body.item.id;
  });

  it('stores captions, places and people in NFC, and keeps the line breaks of a caption', async () => {
    const editor = asToken(a.editor);
    const r = await editor.patch(`/api/items/${item}/metadata`, { caption: 'Zoe\u0308 at the weir\nsummer', place: 'Bru\u0308hl', people: ['Zoe\u0308', 'Zo\u00eb'] });
    expect(r.status, r.text).toBe(200);
    const stored = await editor.get(`/api/items/${item}/metadata`);
    expect(stored.body.caption).toBe('Zo\u00eb at the weir\nsummer');
    expect(stored.body.place).toBe('Br\u00fchl');
    // The same person typed two ways is one tag.
    expect(stored.body.people).toEqual(['Zo\u00eb']);
  });

  it('refuses control characters in a caption, a place, a person or a suggestion, and changes nothing', async () => {
    const editor = asToken(a.editor);
    const fields = async () => {
      const { caption, place, people, backText, dateEdtf, envelope, pendingSuggestions } = (await editor.get(`/api/items/${item}/metadata`)).body;
      return { caption, place, people, backText, dateEdtf, envelope, pendingSuggestions };
    };
    const before = await fields();
    for (const change of [{ caption: 'Picnic\u0000' }, { place: 'Weir\nroad' }, { people: ['Ann\u001b[2J'] }, { caption: 'ok', backText: 'back\u007f' }]) {
      const r = await editor.patch(`/api/items/${item}/metadata`, change);
      expect(r.status, JSON.stringify(change)).toBe(400);
      expect(r.body.error.code).toBe('invalid_input');
    }
    const suggestion = await asToken(a.viewer).post(`/api/items/${item}/suggestions`, { caption: 'Uncle\u0008 Ted' });
    expect(suggestion.status).toBe(400);
    expect(await fields()).toEqual(before);
  });
});

describe('the size refusal', () => {
  it('gives the real figures, not "1 megapixels; the limit is 1 megapixels"', async () => {
    const scan = await sharp({ create: { width: 1200, height: 1000, channels: 3, background: { r: 200, g: 180, b: 150 } } }).jpeg().toBuffer();
    const refusal = await probeScan(scan, { maxPixels: 1_000_000 }).then(
      () => null,
      (err: Error) => err.message,
    );
    expect(refusal).toBe('The image claims 1200 x 1000 pixels (1,200,000 pixels, 1.2 megapixels); the limit is 1,000,000 pixels, 1 megapixels.');
  });
});
