import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { exiftool, runTool, unpackWithUnzip } from '../../support/outside-checks.ts';
import { createBatch, decide, downloadBytes, scan, uploadScan, waitExport, waitReady } from './helpers.ts';

let a: TestArchive;
let bag: string;
let status: any;
let photos: string[];

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
  const r = await editor.post('/api/exports', { selection: { kind: 'batch', batchId } });
  expect(r.status).toBe(202);
  status = await waitExport(editor, r.headers.get('location')!);
  expect(status.state).toBe('ready');
  const dl = await downloadBytes(editor, status.downloadUrl);
  const tmp = await fs.mkdtemp(path.join(os.tmpdir(), 'archive-contents-'));
  bag = await unpackWithUnzip(dl.bytes, tmp);
  photos = (await fs.readdir(path.join(bag, 'data/photos'), { recursive: true })).map(String).filter((p) => p.endsWith('.jpg')).sort();
}, 400_000);
afterAll(() => closeDb());

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
