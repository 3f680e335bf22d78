/**
 * Damaged scans: a JPEG whose entropy data is corrupt (it still decodes, into smeared blocks, with
 * only a libjpeg warning) and one cut short. Both are taken in (their originals are kept byte for
 * byte), then the analysis marks each print "Damaged scan: rescan advised." with the reason,
 * instead of passing the first as a good scan or failing the second with a generic error.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../../db/index.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { createBatch, generatedScans, sha256, upload } from '../../support/scans.ts';
import { until } from './helpers.ts';

let a: TestArchive;
const files: { name: string; bytes: Buffer }[] = [];

beforeAll(async () => {
  a = await makeArchive('damaged');
  const [first, second, good] = await generatedScans(3, 9400, { width: 900, height: 600 });
  // Corrupt entropy data: 4 kB taken out of the middle of the scan's compressed data, so the
  // decoder meets the end of the data segment too early (libjpeg: "Corrupt JPEG data: premature
  // end of data segment") and fills the rest of the picture with grey.
  const sos = first.bytes.indexOf(Buffer.from([0xff, 0xda]));
  const dataStart = sos + 2 + first.bytes.readUInt16BE(sos + 2);
  const cut = dataStart + Math.floor((first.bytes.length - dataStart) / 3);
  files.push({ name: 'corrupt-data.jpg', bytes: Buffer.concat([first.bytes.subarray(0, cut), first.bytes.subarray(cut + 4096)]) });
  // Cut short: the last 40 % of the file never arrived (an interrupted copy).
  files.push({ name: 'cut-short.jpg', bytes: second.bytes.subarray(0, Math.floor(second.bytes.length * 0.6)) });
  files.push({ name: 'good.jpg', bytes: good.bytes });
});
afterAll(() => closeDb());

describe('damaged scans', () => {
  it('takes them in, keeps their originals, and marks each print "Damaged scan: rescan advised." with the reason', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Damaged scans');
    const ids: string[] = [];
    for (const f of files) {
      const r = await upload(editor, batchId, f.name, f.bytes);
      expect(r.status, r.text).toBe(201);
      ids.push(r.body.item.id);
    }
    const settled = await until(
      'every print analysed',
      async () => {
        const items = await Promise.all(ids.map(async (id) => (await editor.get(`/api/items/${id}`)).body));
        const view = items.map((b) => b.item ?? b);
        return view.every((i) => i.state === 'ready' || i.state === 'failed') && view;
      },
      120_000,
    );
    const [corrupt, short, good] = settled;
    expect(good.state).toBe('ready');
    expect(corrupt.state).toBe('failed');
    // libjpeg's words for it ("Corrupt JPEG data: premature end of data segment") say damaged, not cut short.
    expect(corrupt.failureReason).toBe('Damaged scan: rescan advised. The image data is damaged and cannot be decoded.');
    expect(short.state).toBe('failed');
    // libjpeg reports a file cut short either as a premature end or, depending on where the cut
    // falls in the entropy data, as corrupt data: both are a damaged scan to rescan
    expect([
      'Damaged scan: rescan advised. The image is cut short (the file is incomplete or was not fully copied).',
      'Damaged scan: rescan advised. The image data is damaged and cannot be decoded.',
    ]).toContain(short.failureReason);
    // The originals are kept as uploaded.
    for (const [i, id] of ids.entries()) {
      const res = await fetch(`${process.env.APP_URL}/api/items/${id}/original`, { headers: { authorization: `Bearer ${a.editor.token}` } });
      expect(res.status).toBe(200);
      expect(sha256(Buffer.from(await res.arrayBuffer()))).toBe(sha256(files[i].bytes));
    }
  });
});
