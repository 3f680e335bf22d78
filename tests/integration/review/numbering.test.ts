/**
 * Print numbers follow the file names of one upload in natural order (scanners write files in
 * feed order), whatever order the uploads finish in; a later upload comes after; and the numbers
 * are the same on every page that shows them.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import type { Client } from '../../support/http.ts';
import { fadedScans } from './helpers.ts';

let archive: TestArchive;
let editor: Client;
let batchId: string;

beforeAll(async () => {
  archive = await makeArchive('numbering');
  editor = asToken(archive.editor);
  batchId = (await editor.post('/api/batches', { name: 'Feeder run', sourceKind: 'box' })).body.id;
});
afterAll(closeDb);

const send = (name: string, bytes: Buffer, uploadKey?: string) =>
  editor.request('POST', `/api/batches/${batchId}/files`, {
    body: new Uint8Array(bytes),
    headers: { 'content-type': 'application/octet-stream', 'x-file-name': encodeURIComponent(name), ...(uploadKey ? { 'x-upload-key': uploadKey } : {}) },
  });
const numbered = async () => ((await editor.get(`/api/batches/${batchId}/items?brief=1`)).body.items as { seq: number; originalName: string }[]).map((i) => [i.seq, i.originalName]);

describe('numbering prints', () => {
  it('numbers one upload by file name in natural order, though the files arrive in another order', async () => {
    const scans = await fadedScans(5, 801, { width: 300, height: 200 });
    // arrival order as four parallel uploads might finish; names as a sheet-fed scanner writes them
    const arrival = ['scan_10.jpg', 'scan_2.jpg', 'Scan_3.jpg', 'scan_1.jpg', 'scan_9.jpg'];
    for (let i = 0; i < arrival.length; i++) expect((await send(arrival[i], scans[i].bytes, 'first-drop')).status).toBe(201);
    expect(await numbered()).toEqual([[1, 'scan_1.jpg'], [2, 'scan_2.jpg'], [3, 'Scan_3.jpg'], [4, 'scan_9.jpg'], [5, 'scan_10.jpg']]);
    // the captions list numbers them the same
    const captions = (await editor.get(`/api/batches/${batchId}/metadata`)).body.items as { seq: number; originalName: string }[];
    expect(captions.map((i) => [i.seq, i.originalName])).toEqual(await numbered());
  });

  it('puts a later upload after the first, and never renumbers the first', async () => {
    const scans = await fadedScans(2, 811, { width: 300, height: 200 });
    await send('scan_2.jpg', scans[0].bytes, 'second-drop');
    await send('scan_1.jpg', scans[1].bytes, 'second-drop');
    const all = await numbered();
    expect(all.slice(0, 5).map(([seq]) => seq)).toEqual([1, 2, 3, 4, 5]);
    expect(all.slice(5)).toEqual([[6, 'scan_1.jpg'], [7, 'scan_2.jpg']]);
  });

  it('refuses a malformed upload key and stores nothing', async () => {
    const [scan] = await fadedScans(1, 821, { width: 300, height: 200 });
    const before = (await numbered()).length;
    const r = await send('scan_x.jpg', scan.bytes, 'not a key!');
    expect(r.status).toBe(400);
    expect(r.body.error.fields['x-upload-key']).toBeTruthy();
    expect((await numbered()).length).toBe(before);
  });
});
