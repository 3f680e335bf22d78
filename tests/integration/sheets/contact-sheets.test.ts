/**
 * Contact sheets through the real server: the PDF is read back by programs that are not ours
 * (poppler's pdfinfo, pdftotext, pdfimages, pdftoppm), the answers typed back become suggestions
 * in the relative's name, and every refusal leaves the rows as they were.
 */
import { mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ContactSheet, Suggestion, closeDb } from '../../../db/index.ts';
import { ARTIFACTS } from '../../support/browser.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { BASE } from '../../support/http.ts';
import { runTool } from '../../support/outside-checks.ts';
import { batchWithPrints, sha256 } from '../export/helpers.ts';

let a: TestArchive;
let other: TestArchive;
let batchId: string;
let items: string[];
let otherBatchItem: string;
const dir = mkdtempSync(path.join(tmpdir(), 'drawerlight-sheets-'));
// Invented for the test: captions with accents and a second script, so the fonts' subsets are used
const CAPTIONS: Record<number, string> = { 0: 'Zoë at the lake', 3: 'Łukasz and the new car', 12: 'Christmas at Gran’s, Αθήνα' };

async function bytesOf(token: string, url: string): Promise<{ status: number; type: string | null; bytes: Buffer }> {
  const res = await fetch(BASE + url, { headers: { authorization: `Bearer ${token}` } });
  return { status: res.status, type: res.headers.get('content-type'), bytes: Buffer.from(await res.arrayBuffer()) };
}

beforeAll(async () => {
  a = await makeArchive('sheets');
  other = await makeArchive('sheets-other');
  const editor = asToken(a.editor);
  // 13 prints: a full page of 12 and one on a second page
  ({ batchId, itemIds: items } = await batchWithPrints(editor, 'Sheets shoebox', 13, 300));
  for (const [k, caption] of Object.entries(CAPTIONS)) {
    const r = await editor.patch(`/api/items/${items[Number(k)]}/metadata`, { caption, dateEdtf: k === '0' ? '1981-22' : null });
    if (r.status !== 200) throw new Error(`caption answered ${r.status}: ${r.text}`);
  }
  await editor.patch(`/api/items/${items[1]}/metadata`, { people: ['Nora Hartigan'], dateEdtf: '1979' });
  ({ itemIds: [otherBatchItem] } = await batchWithPrints(editor, 'Another box', 1, 400));
}, 300_000);
afterAll(async () => {
  rmSync(dir, { recursive: true, force: true });
  await closeDb();
});

describe('contact sheet PDF', () => {
  let sheetId: string;
  let pdf: string;

  it('makes a sheet of the whole batch whose PDF poppler opens: a cover and 12 prints a page on US Letter', async () => {
    const r = await asToken(a.editor).post(`/api/batches/${batchId}/sheets`, { scope: 'all', paper: 'letter' });
    expect(r.status).toBe(201);
    sheetId = r.body.id;
    expect(r.headers.get('location')).toBe(`/api/sheets/${sheetId}`);
    expect(r.body.prints.map((p: { seq: number }) => p.seq)).toEqual(Array.from({ length: 13 }, (_, i) => i + 1));
    const got = await bytesOf(a.editor.token, `/api/sheets/${sheetId}/pdf`);
    expect([got.status, got.type]).toEqual([200, 'application/pdf']);
    pdf = path.join(dir, 'sheet.pdf');
    writeFileSync(pdf, got.bytes);
    const info = await runTool('pdfinfo', [pdf]);
    expect(info.code).toBe(0);
    expect(info.stdout).toMatch(/^Pages:\s+3$/m);
    // US Letter is 8.5 x 11 inches: 612 x 792 points
    expect(info.stdout).toMatch(/^Page size:\s+612 x 792 pts \(letter\)$/m);
  });

  it('shows every print number and caption, in print-number order, and the cover names the batch and the archive', async () => {
    const text = (await runTool('pdftotext', ['-layout', '-enc', 'UTF-8', pdf, '-'])).stdout;
    const cover = text.split('\f')[0];
    expect(cover).toContain('Sheets shoebox');
    expect(cover).toContain(a.name);
    expect(cover).toMatch(/give or post all the pages back/);
    let last = -1;
    for (let n = 1; n <= 13; n++) {
      const at = text.indexOf(`No. ${n} `) >= 0 ? text.indexOf(`No. ${n} `) : text.indexOf(`No. ${n}\n`);
      expect(at, `print number ${n}`).toBeGreaterThan(last);
      last = at;
    }
    const flat = text.replace(/\s+/g, ' ');
    for (const caption of Object.values(CAPTIONS)) expect(flat).toContain(caption);
    expect(flat).toContain('summer 1981');
    expect((text.match(/Who is this\?/g) ?? []).length).toBe(13);
  });

  it('holds each print\u2019s stored thumbnail as it is, in print-number order', async () => {
    const out = path.join(dir, 'img');
    const r = await runTool('pdfimages', ['-j', pdf, out]);
    expect(r.code).toBe(0);
    const files = readdirSync(dir).filter((f) => f.startsWith('img-')).sort();
    expect(files.length).toBe(13);
    const embedded = files.map((f) => sha256(readFileSync(path.join(dir, f))));
    const expected: string[] = [];
    for (const id of items) expected.push(sha256((await bytesOf(a.editor.token, `/api/items/${id}/thumbnail`)).bytes));
    expect(embedded).toEqual(expected);
  });

  it('renders every page with pdftoppm', async () => {
    const r = await runTool('pdftoppm', ['-r', '40', '-png', pdf, path.join(dir, 'page')]);
    expect(r.code).toBe(0);
    const pages = readdirSync(dir).filter((f) => f.startsWith('page') && f.endsWith('.png'));
    expect(pages.length).toBe(3);
    for (const p of pages) expect(readFileSync(path.join(dir, p)).length).toBeGreaterThan(1000);
    // the cover and the first page of prints, kept as evidence of what gets printed
    mkdirSync(ARTIFACTS, { recursive: true });
    await runTool('pdftoppm', ['-r', '60', '-l', '2', '-png', pdf, path.join(ARTIFACTS, 'sheets-pdf')]);
  });

  it('makes sheets of the prints whose people are unknown, or that have no date, on A4', async () => {
    const editor = asToken(a.editor);
    const people = await editor.post(`/api/batches/${batchId}/sheets`, { scope: 'people' });
    expect(people.status).toBe(201);
    expect(people.body.prints.map((p: { itemId: string }) => p.itemId)).toEqual(items.filter((_, k) => k !== 1));
    const undated = await editor.post(`/api/batches/${batchId}/sheets`, { scope: 'date' });
    expect(undated.body.prints.map((p: { itemId: string }) => p.itemId)).toEqual(items.filter((_, k) => k !== 0 && k !== 1));
    const chosen = await editor.post(`/api/batches/${batchId}/sheets`, { scope: 'chosen', itemIds: [items[5], items[2]] });
    expect(chosen.body.prints.map((p: { seq: number }) => p.seq)).toEqual([3, 6]);
    const file = path.join(dir, 'a4.pdf');
    writeFileSync(file, (await bytesOf(a.editor.token, `/api/sheets/${chosen.body.id}/pdf`)).bytes);
    // A4 is 210 x 297 mm: 595.28 x 841.89 points
    expect((await runTool('pdfinfo', [file])).stdout).toMatch(/^Page size:\s+595\.2\d x 841\.8\d pts \(A4\)$/m);
  });

  it('refuses a sheet with no print, prints of another batch, a viewer and another archive, and makes no sheet', async () => {
    const before = await ContactSheet.count({ where: { archiveId: a.id } });
    const editor = asToken(a.editor);
    const empty = await editor.post(`/api/batches/${batchId}/sheets`, { scope: 'chosen', itemIds: [] });
    expect(empty.status).toBe(400);
    const foreign = await editor.post(`/api/batches/${batchId}/sheets`, { scope: 'chosen', itemIds: [items[0], otherBatchItem] });
    expect([foreign.status, foreign.body.error.fields.itemIds]).toEqual([400, 'Choose prints of this batch.']);
    expect((await asToken(a.viewer).post(`/api/batches/${batchId}/sheets`, { scope: 'all' })).status).toBe(403);
    expect((await asToken(other.owner).post(`/api/batches/${batchId}/sheets`, { scope: 'all' })).status).toBe(404);
    expect((await bytesOf(other.owner.token, `/api/sheets/${sheetId}/pdf`)).status).toBe(404);
    expect(await ContactSheet.count({ where: { archiveId: a.id } })).toBe(before);
  });

  it('refuses a sheet of the prints with no date when every print has one, and makes no sheet', async () => {
    const editor = asToken(a.editor);
    const { batchId: dated, itemIds: [only] } = await batchWithPrints(editor, 'Dated box', 1, 500);
    await editor.patch(`/api/items/${only}/metadata`, { dateEdtf: '1984' });
    const before = await ContactSheet.count({ where: { archiveId: a.id } });
    const r = await editor.post(`/api/batches/${dated}/sheets`, { scope: 'date' });
    expect([r.status, r.body.error.code]).toEqual([400, 'invalid_input']);
    expect(await ContactSheet.count({ where: { archiveId: a.id } })).toBe(before);
  });
});

describe('answers typed back from a sheet', () => {
  let sheetId: string;
  beforeAll(async () => {
    sheetId = (await asToken(a.editor).post(`/api/batches/${batchId}/sheets`, { scope: 'chosen', itemIds: [items[2], items[3]] })).body.id;
  });

  it('keeps an answer as a suggestion in the relative\u2019s name, typed in by the editor; typing it again corrects it', async () => {
    const editor = asToken(a.editor);
    const r = await editor.post(`/api/sheets/${sheetId}/answers`, { itemId: items[2], relative: 'Aunt Nora', who: 'Máire Byrne, Tom Byrne', where: 'Strandhill', when: 'summer 1979' });
    expect(r.status).toBe(201);
    const again = await editor.post(`/api/sheets/${sheetId}/answers`, { itemId: items[2], relative: 'aunt nora', who: 'Máire Byrne, Tom Byrne', where: 'Strandhill beach', when: 'summer 1979' });
    expect([again.status, again.body.suggestionId]).toEqual([200, r.body.suggestionId]);
    const list = (await editor.get(`/api/items/${items[2]}/suggestions`)).body.suggestions;
    expect(list).toHaveLength(1);
    // "summer 1979" is EDTF 1979-22 (Library of Congress EDTF, level 1 seasons)
    expect(list[0]).toMatchObject({ suggestedBy: 'Aunt Nora', typedInBy: expect.stringMatching(/^editor /), people: ['Máire Byrne', 'Tom Byrne'], place: 'Strandhill beach', dateEdtf: '1979-22', state: 'pending' });
    const view = (await editor.get(`/api/sheets/${sheetId}`)).body;
    expect(view.prints.map((p: { seq: number; answered: number }) => [p.seq, p.answered])).toEqual([[3, 1], [4, 0]]);
  });

  it('refuses an answer for a print outside the sheet, an empty one, and a viewer, and keeps no suggestion', async () => {
    const before = await Suggestion.count({ where: { archiveId: a.id } });
    const editor = asToken(a.editor);
    const outside = await editor.post(`/api/sheets/${sheetId}/answers`, { itemId: items[5], relative: 'Aunt Nora', where: 'Sligo' });
    expect([outside.status, outside.body.error.fields.itemId]).toEqual([400, 'Not on this sheet.']);
    expect((await editor.post(`/api/sheets/${sheetId}/answers`, { itemId: items[3], relative: 'Aunt Nora', who: ' ', where: '' })).status).toBe(400);
    expect((await editor.post(`/api/sheets/${sheetId}/answers`, { itemId: items[3], relative: 'Aunt Nora', when: 'the summer Gran visited' })).status).toBe(400);
    expect((await asToken(a.viewer).post(`/api/sheets/${sheetId}/answers`, { itemId: items[3], relative: 'Aunt Nora', where: 'Sligo' })).status).toBe(403);
    expect((await asToken(other.owner).post(`/api/sheets/${sheetId}/answers`, { itemId: items[3], relative: 'Aunt Nora', where: 'Sligo' })).status).toBe(404);
    expect(await Suggestion.count({ where: { archiveId: a.id } })).toBe(before);
  });
});
