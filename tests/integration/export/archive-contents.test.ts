import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import { closeDb, db } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { exiftool, runTool, unpackWithUnzip } from '../../support/outside-checks.ts';
import { createBatch, decide, downloadBytes, scan, uploadScan, waitExport, waitReady } from './helpers.ts';

let a: TestArchive;
let bag: string;
let status: any;
let photos: string[];
/** Every change the export's row went through, recorded by a trigger while it ran. */
let steps: { state: string; step: string | null; progress_done: number; progress_total: number; check_done: number; check_total: number }[];

beforeAll(async () => {
  a = await makeArchive('archive-contents');
  const editor = asToken(a.editor);
  // invented for the demo: a tin of prints the family dates to 1978-1982
  const batchId = await createBatch(editor, 'Biscuit tin', { sourceKind: 'other', sourceLabel: 'Blue biscuit tin', dateFrom: '1978', dateTo: '1982' });
  const ids = [await uploadScan(editor, batchId, 'tin-01.jpg', await scan(71)), await uploadScan(editor, batchId, 'tin-02.jpg', await scan(72)), await uploadScan(editor, batchId, 'tin-03.jpg', await scan(73))];
  for (const id of ids) await waitReady(editor, id);
  await editor.patch(`/api/items/${ids[0]}/metadata`, { caption: 'Zoë on the swing', dateEdtf: 'July 1981', envelope: 'Envelope "Holidays"' });
  await editor.patch(`/api/items/${ids[1]}/metadata`, { caption: 'Łukasz and the dog', dateEdtf: 'between 1978 and 1982' });
  // the third keeps no date: it goes into the batch's years
  for (const id of ids) await decide(editor, id, 'accepted');
  // The row's changes are recorded as they happen (a trigger in a schema of the test's own, for
  // this archive only), so a step too short to see by polling is seen all the same.
  await db().query(`CREATE SCHEMA IF NOT EXISTS export_trace`);
  await db().query(`CREATE TABLE IF NOT EXISTS export_trace.steps (n bigserial, export_id uuid, state text, step text, progress_done int, progress_total int, check_done int, check_total int)`);
  await db().query(`CREATE OR REPLACE FUNCTION export_trace.record() RETURNS trigger AS $$ BEGIN
      INSERT INTO export_trace.steps (export_id, state, step, progress_done, progress_total, check_done, check_total)
      VALUES (NEW.id, NEW.state, NEW.step, NEW.progress_done, NEW.progress_total, NEW.check_done, NEW.check_total); RETURN NEW; END $$ LANGUAGE plpgsql`);
  await db().query(`CREATE TRIGGER export_trace_${a.id.replace(/-/g, '')} AFTER UPDATE ON exports FOR EACH ROW WHEN (NEW.archive_id = '${a.id}') EXECUTE FUNCTION export_trace.record()`);
  const r = await editor.post('/api/exports', { selection: { kind: 'batch', batchId } });
  expect(r.status).toBe(202);
  status = await waitExport(editor, r.headers.get('location')!);
  steps = await db().query(`SELECT state, step, progress_done, progress_total, check_done, check_total FROM export_trace.steps WHERE export_id = :id ORDER BY n`, { replacements: { id: status.id }, type: QueryTypes.SELECT });
  expect(status.state).toBe('ready');
  const dl = await downloadBytes(editor, status.downloadUrl);
  const tmp = await fs.mkdtemp(path.join(os.tmpdir(), 'archive-contents-'));
  bag = await unpackWithUnzip(dl.bytes, tmp);
  photos = (await fs.readdir(path.join(bag, 'data/photos'), { recursive: true })).map(String).filter((p) => p.endsWith('.jpg')).sort();
}, 400_000);
afterAll(async () => {
  await db().query(`DROP TRIGGER IF EXISTS export_trace_${a.id.replace(/-/g, '')} ON exports`);
  await db().query(`DROP SCHEMA IF EXISTS export_trace CASCADE`);
  await closeDb();
});

describe('progress that tells the truth', () => {
  it('shows the check of the written bag as a step of its own, after every print is packed, file by file', () => {
    const checking = steps.filter((s) => s.step === 'checking');
    expect(checking.length).toBeGreaterThan(0);
    // every print is packed before the check starts: never "2 of 3" while the bag is checked
    for (const s of checking) expect(s.progress_done).toBe(3);
    // 3 JPEGs, photos.csv and the 10 files of the pages (index.html, the stylesheet, 3 thumbnails, 3 years, the tin, the about page), from none checked to all
    expect(checking.map((s) => s.check_done)).toContain(0);
    expect(checking.at(-1)).toMatchObject({ check_done: 14, check_total: 14 });
    // packing came first, the check after it, and the export was ready only once the check was done
    const firstCheck = steps.findIndex((s) => s.step === 'checking');
    expect(steps.slice(0, firstCheck).every((s) => s.step === 'packing' && s.state === 'running')).toBe(true);
    expect(steps.slice(firstCheck).findIndex((s) => s.state === 'ready')).toBeGreaterThan(0);
  });

  it('says what was checked once the export is ready', () => {
    expect(status).toMatchObject({ state: 'ready', verified: true, step: null, check: { done: 14, total: 14 } });
  });
});

describe('what the archive carries', () => {
  it("files prints by their dates, a span under its first year, and an undated print in its batch's years instead of undated/", () => {
    expect(photos).toEqual(['1978-1982/undated 0003.jpg', '1978/1978 to 1982 Łukasz and the dog 0002.jpg', '1981/1981-07 Zoë on the swing 0001.jpg']);
  });

  it('gives a year-month to photoshop:DateCreated and to IPTC, with the caption in XMP and in UTF-8 IPTC', async () => {
    const tags = await exiftool(path.join(bag, 'data/photos', photos[2]));
    expect(tags['XMP-dc:Description']).toBe('Zoë on the swing');
    expect(tags['IPTC:Caption-Abstract']).toBe('Zoë on the swing');
    // IPTC IIM 4.2, dataset 1:90: ESC % G declares UTF-8
    expect(tags['IPTC:CodedCharacterSet']).toBe('\u001b%G');
    expect(tags['XMP-photoshop:DateCreated']).toBe('1981:07');
    expect(tags['IPTC:DateCreated']).toBe('1981:07:00');
    expect(tags['ExifIFD:DateTimeOriginal']).toBeUndefined();
  });

  it('says where the print came from in plain words in dc:source', async () => {
    const tags = await exiftool(path.join(bag, 'data/photos', photos[2]));
    expect(tags['XMP-dc:Source']).toBe('From: Blue biscuit tin; Envelope "Holidays"');
  });

  it('gives a span its start as the date and the whole EDTF in our own field', async () => {
    const file = path.join(bag, 'data/photos', photos[1]);
    const tags = await exiftool(file);
    expect(tags['XMP-photoshop:DateCreated']).toBe(1978);
    // as stored: ExifTool reads an unknown field that looks like "a/b" as a fraction unless told not to
    const edtf = await runTool('exiftool', ['-s3', '-api', 'XMPAutoConv=0', '-XMP-drawerlight:DateEDTF', file]);
    expect(edtf.stdout.trim()).toBe('1978/1982');
  });

  it('writes no date into the undated print, though it sits in the batch folder', async () => {
    const tags = await exiftool(path.join(bag, 'data/photos', photos[0]));
    expect(tags['XMP-photoshop:DateCreated']).toBeUndefined();
    expect(tags['IPTC:DateCreated']).toBeUndefined();
  });
});
