import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { crc32 } from 'node:zlib';
import sharp from 'sharp';
import { Correction, Item, Original, closeDb, db } from '../../../db/index.ts';
import { listOutbox } from '../../../src/lib/server/outbox.ts';
import { storage } from '../../../src/lib/server/storage.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { Client } from '../../support/http.ts';
import { createBatch, generatedScans, sha256, upload, uploadAll, waitFullSize, waitSettled } from '../../support/scans.ts';
import PgBoss from 'pg-boss';
import { QueryTypes } from 'sequelize';
import { BATCH_QUIET_SECONDS, BATCH_SETTLED_QUEUE, RENDER_QUIET_SECONDS } from '../../../src/lib/server/processing.ts';
import { until } from '../../support/until.ts';

let a: TestArchive;
let other: TestArchive;
beforeAll(async () => {
  a = await makeArchive('ingest');
  other = await makeArchive('ingest-other');
});
afterAll(() => closeDb());

describe('batch ingest through the API', () => {
  it('takes 40 generated scans to ready, each with an analysis and corrected copies, then makes their full-size corrected images', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Forty generated prints');
    const files = await generatedScans(40, 100);
    const replies = await uploadAll(editor, batchId, files, 4);
    for (const r of replies) {
      expect(r.status).toBe(201);
      expect(r.body).toMatchObject({ outcome: 'added', item: { state: 'queued' } });
      expect(r.headers.get('location')).toBe(`/api/items/${r.body.item.id}`);
    }
    expect(new Set(replies.map((r) => r.body.item.seq))).toEqual(new Set(Array.from({ length: 40 }, (_, i) => i + 1)));

    const status = await waitSettled(editor, batchId);
    expect(status.counts).toMatchObject({ ready: 40, failed: 0, queued: 0, analysing: 0, total: 40 });

    const items = await editor.get(`/api/batches/${batchId}/items`);
    expect(items.status).toBe(200);
    expect(items.body.items).toHaveLength(40);
    const bySha = new Map(files.map((f) => [sha256(f.bytes), f]));
    for (const it of items.body.items.slice(0, 40)) {
      expect(it.state).toBe('ready');
      expect(it.analysis).toMatchObject({ fadeGrade: expect.any(String), proposed: { version: 1 } });
      expect(bySha.get(it.original.sha256)?.name).toBe(it.originalName);
    }
    // Ready for review means the corrected small copies exist: the preview of the proposal differs from the original's.
    for (const it of items.body.items.filter((i: any) => i.analysis.fadeGrade !== 'none').slice(0, 3)) {
      const corrected = await fetchBytes(editor, it.links.preview);
      const original = await fetchBytes(editor, `${it.links.preview}?of=original`);
      expect((await sharp(corrected.bytes).metadata()).format).toBe('jpeg');
      expect(sha256(corrected.bytes)).not.toBe(sha256(original.bytes));
    }

    // The full-size corrected JPEGs follow, all of them.
    await waitFullSize(editor, batchId, 40);
    const rendered = (await editor.get(`/api/batches/${batchId}/items`)).body.items;
    for (const it of rendered) expect(it.links.corrected).toBe(`/api/items/${it.id}/corrected`);
    // None was started before every scan of the batch had its analysis and no scan had arrived for RENDER_QUIET_SECONDS.
    // (The web server and PostgreSQL read the same clock; the feeder's own test is `created_at >
    // now() - RENDER_QUIET_SECONDS` on PostgreSQL's clock, so no margin is needed.)
    const [order] = await db().query<{ after_analyses: boolean; after_quiet: boolean }>(
      `SELECT min(i.render_queued_at) >= (SELECT max(c.created_at) FROM corrections c JOIN items ci ON ci.id = c.item_id WHERE ci.batch_id = :batchId AND c.version = 1) AS after_analyses,
              min(i.render_queued_at) >= max(i.created_at) + make_interval(secs => :quiet) AS after_quiet
         FROM items i WHERE i.batch_id = :batchId`,
      { replacements: { batchId, quiet: RENDER_QUIET_SECONDS }, type: QueryTypes.SELECT },
    );
    expect(order).toEqual({ after_analyses: true, after_quiet: true });
    // Downloads: a sample, byte for byte for the original, a decodable JPEG of the same size for the render.
    for (const it of rendered.slice(0, 5)) {
      const orig = await fetchBytes(editor, it.links.original);
      expect(orig.type).toBe('image/jpeg');
      expect(sha256(orig.bytes)).toBe(it.original.sha256);
      const corrected = await fetchBytes(editor, it.links.corrected);
      expect(corrected.type).toBe('image/jpeg');
      const meta = await sharp(corrected.bytes).metadata();
      expect([meta.format, meta.width, meta.height]).toEqual(['jpeg', 600, 400]);
      const preview = await fetchBytes(editor, it.links.preview);
      expect((await sharp(preview.bytes).metadata()).format).toBe('jpeg');
      const thumb = await fetchBytes(editor, `${it.links.thumbnail}?of=original`);
      expect(Math.max((await sharp(thumb.bytes).metadata()).width!, 1)).toBeLessThanOrEqual(360);
    }
    // Exactly one proposed correction per item, however the jobs ran.
    const dbItems = await Item.findAll({ where: { batchId } });
    const proposed = await Correction.count({ where: { itemId: dbItems.map((i) => i.id), origin: 'proposed' } });
    expect(proposed).toBe(40);

    // The creator hears about it once (the mail fake's outbox), after the batch has been quiet for BATCH_QUIET_SECONDS.
    const forty = async () => (await listOutbox()).filter((m) => m.to.includes(a.editor.email) && m.subject.includes('Forty generated prints'));
    await until('the batch finished e-mail', async () => (await forty()).length > 0, 60_000);
    const mails = await forty();
    expect(mails).toHaveLength(1);
    expect(mails[0].text).toContain('40 ready for review');
    expect(mails[0].text).toContain(`/batches/${batchId}`);
    // A late settling job for the same batch (as when several workers finish its last analyses at
    // once) changes nothing: once it has run, there is still one mail.
    const boss = new PgBoss({ connectionString: process.env.DATABASE_URL, supervise: false, schedule: false, migrate: false });
    await boss.start();
    try {
      const late = (await boss.send(BATCH_SETTLED_QUEUE.name, { batchId }))!;
      let state = '';
      await until('the late settling job to run', async () => (state = (await boss.getJobById(BATCH_SETTLED_QUEUE.name, late))?.state ?? 'gone') === 'completed', 60_000, () => state);
    } finally {
      await boss.stop({ graceful: false, wait: true });
    }
    expect((await listOutbox()).filter((m) => m.to.includes(a.editor.email) && m.subject.includes('Forty generated prints'))).toHaveLength(1);
  }, 300_000);

  it('mails once, about the whole sitting, when a slow upload lets the worker catch up in between', async () => {
    const owner = asToken(a.owner);
    const batchId = await createBatch(owner, 'Slow sitting');
    const [first, second] = await generatedScans(2, 800);
    expect((await upload(owner, batchId, 'first.jpg', first.bytes)).status).toBe(201);
    await waitSettled(owner, batchId);

    // The second scan comes over a slow link: a few bytes every half second (the pace of the link,
    // not a wait for the product), until the batch has gone BATCH_QUIET_SECONDS without a new print
    // and a settling job has looked at it since. Only an upload still arriving holds the mail back then.
    let finish = false;
    let sent = 0;
    const body = new ReadableStream<Uint8Array>({
      async pull(ctl) {
        if (finish) {
          ctl.enqueue(second.bytes.subarray(sent));
          ctl.close();
          return;
        }
        await new Promise((r) => setTimeout(r, 500));
        const piece = second.bytes.subarray(sent, Math.min(sent + 64, second.bytes.length - 1));
        sent += piece.length;
        ctl.enqueue(piece);
      },
    });
    const slow = owner.request('POST', `/api/batches/${batchId}/files`, { body, headers: { 'content-type': 'application/octet-stream', 'x-file-name': 'second.jpg' } });
    // pg-boss's job table, read by the test only: a settling job of this batch completed past the quiet period
    await until(
      'a settling job to have run after the first print had been quiet for the quiet period',
      async () =>
        (
          await db().query<{ n: string }>(
            `SELECT count(*) AS n FROM pgboss.job WHERE name = :queue AND data->>'batchId' = :batchId AND state = 'completed'
                AND completed_on > (SELECT max(created_at) FROM items WHERE batch_id = :batchId) + make_interval(secs => :quiet)`,
            { replacements: { queue: BATCH_SETTLED_QUEUE.name, batchId, quiet: BATCH_QUIET_SECONDS }, type: QueryTypes.SELECT },
          )
        )[0].n !== '0',
      120_000,
    );
    const mine = async () => (await listOutbox()).filter((m) => m.to.includes(a.owner.email) && m.subject.includes('Slow sitting'));
    expect(await mine(), 'no mail while a scan is still arriving').toHaveLength(0);
    expect(sent).toBeLessThan(second.bytes.length);
    finish = true;
    expect((await slow).status).toBe(201);

    await waitSettled(owner, batchId);
    await until('the batch finished e-mail', async () => (await mine()).length > 0, 90_000);
    const mails = await mine();
    expect(mails).toHaveLength(1);
    expect(mails[0].text).toContain('All 2 scans');
  }, 240_000);

  it('stores the same file once: a second upload is linked to the first item and reported', async () => {
    const editor = asToken(a.editor);
    const first = await createBatch(editor, 'Shoebox A');
    const second = await createBatch(editor, 'Shoebox B');
    const [scan] = await generatedScans(1, 900);
    const r1 = await upload(editor, first, 'IMG_0001.jpg', scan.bytes);
    expect(r1.status).toBe(201);
    const r2 = await upload(editor, first, 'IMG_0001 copy.jpg', scan.bytes);
    expect(r2.status).toBe(200);
    expect(r2.body).toMatchObject({ outcome: 'duplicate', item: { id: r1.body.item.id }, existing: { batchName: 'Shoebox A', seq: 1, originalName: 'IMG_0001.jpg' } });
    const r3 = await upload(editor, second, 'again.jpg', scan.bytes);
    expect(r3.status).toBe(200);
    expect(r3.body).toMatchObject({ outcome: 'duplicate', item: { id: r1.body.item.id, batchId: first } });

    const sha = sha256(scan.bytes);
    const originals = await Original.findAll({ where: { archiveId: a.id, sha256: sha } });
    expect(originals).toHaveLength(1);
    expect(await Item.count({ where: { archiveId: a.id, originalId: originals[0].id } })).toBe(1);
    const stored = (await storage().list('originals')).filter((k) => k.includes(sha));
    expect(stored).toHaveLength(1);
    // Another archive keeps its own copy: dedupe is per archive.
    const otherBatch = await createBatch(asToken(other.editor), 'Their shoebox');
    expect((await upload(asToken(other.editor), otherBatch, 'theirs.jpg', scan.bytes)).status).toBe(201);
  });

  it('fails a corrupt scan alone, with its reason, and refuses non-scans by their bytes', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Mixed drawer');
    const good = await generatedScans(3, 300);
    const [whole] = await generatedScans(1, 400);
    const cut = whole.bytes.subarray(0, Math.floor(whole.bytes.length * 0.6));
    const originalsBefore = await Original.count({ where: { archiveId: a.id } });

    const refused = [
      { name: 'notes.jpg', bytes: Buffer.from('Hall cupboard, top shelf: 1978 to 1983\n'), status: 415, code: 'unsupported_type' },
      { name: 'drawing.png', bytes: Buffer.from('<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"></svg>'), status: 415, code: 'unsupported_type' },
      { name: 'page.tif', bytes: Buffer.from('<!doctype html><html><body>hello</body></html>'), status: 415, code: 'unsupported_type' },
      { name: 'empty.jpg', bytes: Buffer.alloc(0), status: 400, code: 'empty' },
    ];
    for (const f of refused) {
      const r = await upload(editor, batchId, f.name, f.bytes);
      expect(r.status, f.name).toBe(f.status);
      expect(r.body.error).toMatchObject({ code: f.code, message: expect.any(String), fields: { file: f.name } });
    }
    expect(await Original.count({ where: { archiveId: a.id } })).toBe(originalsBefore);

    const replies = await uploadAll(editor, batchId, [...good, { name: 'cut-short.jpg', bytes: cut }], 2);
    for (const r of replies) expect(r.status).toBe(201);
    const status = await waitSettled(editor, batchId);
    expect(status.counts).toMatchObject({ ready: 3, failed: 1, total: 4 });

    const failed = await editor.get(`/api/batches/${batchId}/items?state=failed`);
    expect(failed.body.items).toHaveLength(1);
    expect(failed.body.items[0]).toMatchObject({ originalName: 'cut-short.jpg', failureReason: expect.stringMatching(/cut short|damaged/i), links: { retry: expect.any(String) } });
    // The damaged original is still kept, untouched.
    const orig = await fetchBytes(editor, failed.body.items[0].links.original);
    expect(sha256(orig.bytes)).toBe(sha256(cut));
    // Trying again queues it (202); it fails again for the same reason, and never turns ready.
    // (A second try posted at once is not checked for 409 here: a scan cut short can fail again
    // within milliseconds, and then a new try is rightly allowed. The refusal is checked on a ready item.)
    const retry = await editor.post(failed.body.items[0].links.retry);
    expect(retry.status).toBe(202);
    expect(retry.body).toMatchObject({ id: failed.body.items[0].id, state: 'queued' });
    const again = await waitSettled(editor, batchId);
    expect(again.counts).toMatchObject({ ready: 3, failed: 1 });
    const failedAgain = await editor.get(`/api/batches/${batchId}/items?state=failed`);
    expect(failedAgain.body.items).toMatchObject([{ id: failed.body.items[0].id, failureReason: expect.stringMatching(/cut short|damaged/i) }]);
    // Only a failed item can be tried again: a ready one is refused with 409 and stays ready.
    const ready = await editor.get(`/api/batches/${batchId}/items?state=ready`);
    expect(ready.body.items).toHaveLength(3);
    const readyRetry = `/api/items/${ready.body.items[0].id}/retry`;
    const refusedRetry = await editor.post(readyRetry);
    expect(refusedRetry.status).toBe(409);
    expect(refusedRetry.body.error).toMatchObject({ code: 'not_failed', message: expect.stringMatching(/ready/) });
    expect((await waitSettled(editor, batchId)).counts).toMatchObject({ ready: 3, failed: 1 });
  }, 180_000);

  it('refuses a scan over the pixel limit from its header, before decoding it', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Oversized');
    // A PNG whose IHDR claims 50000 x 50000 pixels (2500 megapixels, over the 150 default) with a token IDAT.
    const r = await upload(editor, batchId, 'bomb.png', bombPng());
    expect(r.status).toBe(413);
    expect(r.body.error.code).toBe('too_many_pixels');
  });

  it('answers 401 anonymous, 404 to another archive, 403 to a viewer', async () => {
    const batchId = await createBatch(asToken(a.editor), 'Guarded');
    const [scan] = await generatedScans(1, 700);
    expect((await upload(new Client(), batchId, 'x.jpg', scan.bytes)).status).toBe(401);
    expect((await upload(asToken(other.owner), batchId, 'x.jpg', scan.bytes)).status).toBe(404);
    expect((await upload(asToken(a.viewer), batchId, 'x.jpg', scan.bytes)).status).toBe(403);
    expect((await asToken(other.owner).get(`/api/batches/${batchId}`)).status).toBe(404);
    expect((await asToken(other.owner).get(`/api/batches/${batchId}/items`)).status).toBe(404);
    expect((await asToken(a.viewer).post('/api/batches', { name: 'Not mine to make' })).status).toBe(403);
    expect((await asToken(a.viewer).get(`/api/batches/${batchId}`)).status).toBe(200);
    const ok = await upload(asToken(a.editor), batchId, 'x.jpg', scan.bytes);
    expect(ok.status).toBe(201);
    const itemId = ok.body.item.id;
    expect((await new Client().get(`/api/items/${itemId}/original`)).status).toBe(401);
    expect((await asToken(other.owner).get(`/api/items/${itemId}/original`)).status).toBe(404);
    expect((await asToken(a.viewer).get(`/api/items/${itemId}/original`)).status).toBe(200);
    const list = await asToken(a.viewer).get('/api/batches');
    expect(list.body.batches.find((b: any) => b.id === batchId)).toMatchObject({ name: 'Guarded', counts: { total: 1 } });
  });

  it('lists batches with counts, validates the batch form and refuses a second batch of the same name', async () => {
    const editor = asToken(a.editor);
    const r = await editor.post('/api/batches', { name: 'Green album', sourceKind: 'album', sourceLabel: 'Green album, pages 1-20', dateFrom: '1978', dateTo: '1983~', notes: 'Invented for the test.' });
    expect(r.status).toBe(201);
    expect(r.headers.get('location')).toBe(`/api/batches/${r.body.id}`);
    expect(r.body).toMatchObject({ sourceKind: 'album', dateFrom: '1978', dateTo: '1983~', counts: { total: 0 } });
    expect((await editor.post('/api/batches', { name: 'Green album' })).status).toBe(409);
    const bad = await editor.post('/api/batches', { name: '', sourceKind: 'crate', dateFrom: 'last summer' });
    expect(bad.status).toBe(400);
    expect(Object.keys(bad.body.error.fields).sort()).toEqual(['dateFrom', 'name', 'sourceKind']);
  });
});

function pngChunk(type: string, data: Buffer): Buffer {
  const len = Buffer.alloc(4);
  len.writeUInt32BE(data.length);
  const body = Buffer.concat([Buffer.from(type, 'latin1'), data]);
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(crc32(body) >>> 0);
  return Buffer.concat([len, body, crc]);
}

function bombPng(): Buffer {
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(50000, 0);
  ihdr.writeUInt32BE(50000, 4);
  ihdr[8] = 8;
  ihdr[9] = 2;
  return Buffer.concat([
    Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    pngChunk('IHDR', ihdr),
    pngChunk('IDAT', Buffer.from([0x78, 0x9c, 0x03, 0x00, 0x00, 0x00, 0x00, 0x01])),
    pngChunk('IEND', Buffer.alloc(0)),
  ]);
}

async function fetchBytes(client: Client, path: string): Promise<{ type: string | null; bytes: Buffer }> {
  const res = await fetch(`${process.env.APP_URL}${path}`, { headers: { authorization: `Bearer ${client.token}` } });
  expect(res.status, path).toBe(200);
  return { type: res.headers.get('content-type'), bytes: Buffer.from(await res.arrayBuffer()) };
}
