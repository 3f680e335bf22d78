/**
 * The same picture twice, through the real pipeline: scans uploaded through the API, analysed by
 * the real worker (which stores each print's fingerprint and looks across the archive), the
 * editor's choices through the API, checked in the database and the stored files.
 * The scans: lab photographs (tests/lab/photos.ts) as a faded print scan and as a clean rescan from
 * the negative with another crop and exposure (tests/support/same-picture-scans.ts, as
 * `npm run bench:duplicates` makes them). Which pictures should match is known by construction.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import { closeDb, db } from '../../../db/index.ts';
import { proposeSamePictures } from '../../../src/lib/server/same-picture.ts';
import { storage } from '../../../src/lib/server/storage.ts';
import { loadPhoto, PHOTOS } from '../../lab/photos.ts';
import { rng } from '../../lab/simulator.ts';
import { asSession, asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import type { Client } from '../../support/http.ts';
import { batchOfScans, cleanRescan, fadedScan } from '../../support/same-picture-scans.ts';
import { sha256 } from '../../support/scans.ts';
import { until } from '../../support/until.ts';

let a: TestArchive;
let b: TestArchive;
let editor: Client;

const photo = (id: string) => loadPhoto(PHOTOS.find((p) => p.id === id)!, 512);
const faded = async (id: string, seed: number) => ({ name: `${id}-print.jpg`, bytes: await fadedScan(await photo(id), seed, 'dark') });
const rescan = async (id: string, seed: number) => ({ name: `${id}-negative.jpg`, bytes: await cleanRescan(await photo(id), rng(seed)) });

const batchOf = batchOfScans;

const pairsIn = (ids: string[]) =>
  db().query<{ first_item_id: string; second_item_id: string; distance: number; outcome: string; kept_item_id: string | null }>(
    `SELECT first_item_id, second_item_id, distance, outcome, kept_item_id FROM same_pictures WHERE first_item_id IN (:ids) OR second_item_id IN (:ids) ORDER BY created_at`,
    { replacements: { ids }, type: QueryTypes.SELECT },
  );
const itemRow = async (id: string) =>
  (
    await db().query<{ original_id: string; print_original_id: string | null; decision: string | null; deleted_at: Date | null; state: string; fingerprint: string | null }>(
      'SELECT original_id, print_original_id, decision, deleted_at, state, fingerprint::text AS fingerprint FROM items WHERE id = :id',
      { replacements: { id }, type: QueryTypes.SELECT },
    )
  )[0];
const samePair = (p: { first_item_id: string; second_item_id: string }, x: string, y: string) => new Set([p.first_item_id, p.second_item_id]).size === 2 && [x, y].every((id) => [p.first_item_id, p.second_item_id].includes(id));

beforeAll(async () => {
  a = await makeArchive('same-picture');
  b = await makeArchive('same-picture-other');
  editor = asToken(a.editor);
});
afterAll(() => closeDb());

describe('the same picture twice', () => {
  let shoebox: { batchId: string; ids: string[] };
  let later: { batchId: string; ids: string[] };

  it('stores a fingerprint with every analysed print, proposes a faded print and its clean rescan from another batch, and not unrelated pictures', async () => {
    shoebox = await batchOf(editor, 'Shoebox 1978–83', [await faded('chelsea', 1), await faded('coffee', 2), await faded('astronaut', 3), await faded('friends', 4)]);
    later = await batchOf(editor, 'Later envelope', [await rescan('chelsea', 11), await faded('motorcycle', 12), await rescan('astronaut', 13), await rescan('friends', 14)]);
    for (const id of [...shoebox.ids, ...later.ids]) expect((await itemRow(id)).fingerprint).toMatch(/^[01]{128}$/);

    const [chelsea, coffee, astronaut, friends] = shoebox.ids;
    const [chelseaRescan, motorcycle, astronautRescan, friendsRescan] = later.ids;
    const pairs = await pairsIn([...shoebox.ids, ...later.ids]);
    // exactly the three pictures scanned twice, each once, the earlier print first; coffee and motorcycle in none
    expect(pairs).toHaveLength(3);
    for (const [print, again] of [[chelsea, chelseaRescan], [astronaut, astronautRescan], [friends, friendsRescan]]) {
      const pair = pairs.find((p) => samePair(p, print, again));
      expect(pair).toMatchObject({ first_item_id: print, second_item_id: again, outcome: 'open' });
      expect(pair!.distance).toBeLessThanOrEqual(38);
    }
    expect(JSON.stringify(pairs)).not.toContain(coffee);
    expect(JSON.stringify(pairs)).not.toContain(motorcycle);

    // both prints' pages name the other, by print number and batch
    const seen = await editor.get(`/api/items/${chelseaRescan}/same-picture`);
    expect(seen.status).toBe(200);
    expect(seen.body.thisPrint.id).toBe(chelseaRescan);
    expect(seen.body.pairs).toEqual([expect.objectContaining({ outcome: 'open', rescanOf: false, other: expect.objectContaining({ id: chelsea, seq: 1, batchName: 'Shoebox 1978–83' }) })]);
    expect((await editor.get(`/api/items/${chelsea}/same-picture`)).body.pairs[0].other).toMatchObject({ id: chelseaRescan, seq: 1, batchName: 'Later envelope' });
    expect((await editor.get(`/api/items/${coffee}/same-picture`)).body.pairs).toEqual([]);
  });

  it('gives a print analysed before fingerprints were kept the same fingerprint its analysis would have stored', async () => {
    const coffee = shoebox.ids[1];
    const stored = (await itemRow(coffee)).fingerprint;
    await db().query('UPDATE items SET fingerprint = NULL WHERE id = :id', { replacements: { id: coffee } });
    const filled = await until('the worker fingerprints the print again', async () => (await itemRow(coffee)).fingerprint, 90_000);
    expect(filled).toBe(stored);
  });

  it('keeps both when told, and never proposes that pair again', async () => {
    const [chelsea] = shoebox.ids;
    const [chelseaRescan] = later.ids;
    const r = await editor.post(`/api/items/${chelseaRescan}/same-picture`, { otherId: chelsea, choice: 'keep_both' });
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ outcome: 'kept_both', removedItemId: null });
    // looked for again (as a new analysis of either print does): the decided pair stays decided
    await proposeSamePictures(chelseaRescan);
    await proposeSamePictures(chelsea);
    const pairs = (await pairsIn([chelsea])).filter((p) => samePair(p, chelsea, chelseaRescan));
    expect(pairs.map((p) => p.outcome)).toEqual(['kept_both']);
    expect((await editor.get(`/api/items/${chelsea}/same-picture`)).body.pairs).toEqual([]);
    for (const id of [chelsea, chelseaRescan]) expect((await itemRow(id)).deleted_at).toBeNull();
  });

  it('keeps one: the other print is removed the usual way (restorable), its original scan kept', async () => {
    const astronaut = shoebox.ids[2];
    const astronautRescan = later.ids[2];
    const before = await itemRow(astronaut);
    const r = await editor.post(`/api/items/${astronautRescan}/same-picture`, { otherId: astronaut, choice: 'keep_this' });
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ outcome: 'kept_one', keptItemId: astronautRescan, removedItemId: astronaut });
    expect((await itemRow(astronaut)).deleted_at).not.toBeNull();
    expect((await itemRow(astronautRescan)).deleted_at).toBeNull();
    const removed = await editor.get('/api/removed');
    expect(JSON.stringify(removed.body.removed)).toContain(astronaut);
    const [orig] = await db().query<{ storage_key: string; sha256: string }>('SELECT storage_key, sha256 FROM originals WHERE id = :id', { replacements: { id: before.original_id }, type: QueryTypes.SELECT });
    expect(sha256(await storage().readBuffer(orig.storage_key))).toBe(orig.sha256);
    expect((await pairsIn([astronaut])).find((p) => samePair(p, astronaut, astronautRescan))).toMatchObject({ outcome: 'kept_one', kept_item_id: astronautRescan });
    expect((await editor.get(`/api/items/${astronautRescan}/same-picture`)).body.pairs).toEqual([]);
  });

  it('links two prints as the same picture, shown on both pages', async () => {
    const friends = shoebox.ids[3];
    const friendsRescan = later.ids[3];
    const r = await editor.post(`/api/items/${friends}/same-picture`, { otherId: friendsRescan, choice: 'link' });
    expect(r.status).toBe(200);
    expect(r.body.outcome).toBe('linked');
    expect((await editor.get(`/api/items/${friends}/same-picture`)).body.pairs).toEqual([expect.objectContaining({ outcome: 'linked', other: expect.objectContaining({ id: friendsRescan }) })]);
    expect((await editor.get(`/api/items/${friendsRescan}/same-picture`)).body.pairs).toEqual([expect.objectContaining({ outcome: 'linked', other: expect.objectContaining({ id: friends }) })]);
    for (const id of [friends, friendsRescan]) expect((await itemRow(id)).deleted_at).toBeNull();
  });

  it('refuses a print paired with itself, a print of another archive, a viewer, and a rescan use that does not fit, changing nothing', async () => {
    const [, coffee] = shoebox.ids;
    const [, motorcycle] = later.ids;
    const other = await batchOf(asToken(b.editor), 'Elsewhere', [await faded('wine', 21)]);
    const archives = [a.id, b.id];
    const snapshot = async () => {
      const originals = await db().query<{ storage_key: string }>('SELECT storage_key FROM originals WHERE archive_id IN (:archives) ORDER BY storage_key', { replacements: { archives }, type: QueryTypes.SELECT });
      return {
        pairs: await db().query('SELECT * FROM same_pictures WHERE archive_id IN (:archives) ORDER BY id', { replacements: { archives }, type: QueryTypes.SELECT }),
        items: await db().query('SELECT id, original_id, print_original_id, decision, deleted_at, state FROM items WHERE archive_id IN (:archives) ORDER BY id', { replacements: { archives }, type: QueryTypes.SELECT }),
        files: await Promise.all(originals.map(async (o) => [o.storage_key, sha256(await storage().readBuffer(o.storage_key))])),
      };
    };
    const before = await snapshot();

    const self = await editor.post(`/api/items/${coffee}/same-picture`, { otherId: coffee, choice: 'link' });
    expect(self.status).toBe(400);
    const elsewhere = await editor.post(`/api/items/${coffee}/same-picture`, { otherId: other.ids[0], choice: 'keep_this' });
    expect(elsewhere.status).toBe(404);
    const viewer = await asToken(a.viewer).post(`/api/items/${coffee}/same-picture`, { otherId: motorcycle, choice: 'keep_this' });
    expect(viewer.status).toBe(403);
    // not a rescan batch, and the other print is not set aside
    const notRescan = await editor.post(`/api/items/${motorcycle}/same-picture`, { otherId: coffee, choice: 'use_rescan' });
    expect(notRescan.status).toBe(409);
    expect(notRescan.body.error.code).toBe('not_a_rescan');
    const unknown = await editor.post(`/api/items/${coffee}/same-picture`, { otherId: motorcycle, choice: 'merge' });
    expect(unknown.status).toBe(400);

    expect(await snapshot()).toEqual(before);
  });
});

describe('a rescan from the negative finds its print', () => {
  it('matches a scan uploaded as a rescan to the print set aside for one; once confirmed it is that print’s scan, the old one kept, and the print is measured again and leaves the rescan list', async () => {
    const drawer = await batchOf(editor, 'Dresser drawer', [await faded('pagoda', 32), await faded('boats', 32)]);
    const [pagoda, boats] = drawer.ids;
    const seen = (await editor.get(`/api/items/${pagoda}`)).body.item;
    const aside = await editor.post(`/api/items/${pagoda}/decision`, { decision: 'rescan', lockVersion: seen.lockVersion, negativeAvailable: 'yes', negativeLocation: 'sleeve 4' });
    expect(aside.status).toBe(200);

    const rescans = await batchOf(editor, 'Negatives, first sitting', [await rescan('pagoda', 42), await rescan('boats', 42)], true);
    const [pagodaRescan, boatsRescan] = rescans.ids;
    const offer = (await editor.get(`/api/items/${pagodaRescan}/same-picture`)).body.pairs;
    expect(offer).toEqual([expect.objectContaining({ rescanOf: true, other: expect.objectContaining({ id: pagoda, setAside: true }) })]);
    expect((await editor.get(`/api/items/${pagoda}/same-picture`)).body.pairs).toEqual([expect.objectContaining({ rescanFound: true, other: expect.objectContaining({ id: pagodaRescan }) })]);
    // the rescan list points the editor to it
    const session = await asSession(a.editor);
    const listed = await session.get('/rescans', { accept: 'text/html' });
    expect(listed.status).toBe(200);
    expect(listed.text).toContain(`data-found-rescan="${pagodaRescan}"`);

    // the boats' print was never set aside: its rescan is only "the same picture", and using it is refused with nothing changed
    expect((await editor.get(`/api/items/${boatsRescan}/same-picture`)).body.pairs).toEqual([expect.objectContaining({ rescanOf: false, other: expect.objectContaining({ id: boats }) })]);
    const boatsBefore = await itemRow(boats);
    const refused = await editor.post(`/api/items/${boatsRescan}/same-picture`, { otherId: boats, choice: 'use_rescan' });
    expect(refused.status).toBe(409);
    expect(refused.body.error.code).toBe('not_set_aside');
    expect(await itemRow(boats)).toEqual(boatsBefore);
    expect((await itemRow(boatsRescan)).deleted_at).toBeNull();

    const printBefore = await itemRow(pagoda);
    const rescanRow = await itemRow(pagodaRescan);
    const [oldOriginal] = await db().query<{ storage_key: string; sha256: string }>('SELECT storage_key, sha256 FROM originals WHERE id = :id', { replacements: { id: printBefore.original_id }, type: QueryTypes.SELECT });
    const used = await editor.post(`/api/items/${pagodaRescan}/same-picture`, { otherId: pagoda, choice: 'use_rescan' });
    expect(used.status).toBe(202);
    expect(used.body).toMatchObject({ outcome: 'rescan_used', keptItemId: pagoda, removedItemId: pagodaRescan });

    const after = await until('the print measured again from the rescan', async () => {
      const row = await itemRow(pagoda);
      return row.state === 'ready' && row.fingerprint ? row : null;
    });
    expect(after).toMatchObject({ original_id: rescanRow.original_id, print_original_id: printBefore.original_id, decision: null, deleted_at: null });
    expect(after.fingerprint).not.toBe(printBefore.fingerprint);
    // the print scan stays, byte for byte
    expect(sha256(await storage().readBuffer(oldOriginal.storage_key))).toBe(oldOriginal.sha256);
    // the rescan's own entry is removed (restorable); the rescan list no longer holds the print
    expect((await itemRow(pagodaRescan)).deleted_at).not.toBeNull();
    const list = await editor.get('/api/rescans.csv');
    expect(list.status).toBe(200);
    expect(list.text).not.toContain(pagoda);
    const relisted = await session.get('/rescans', { accept: 'text/html' });
    expect(relisted.status).toBe(200);
    expect(relisted.text).not.toContain('data-found-rescan');
    // using it a second time is refused: the print is no longer set aside
    const again = await editor.post(`/api/items/${pagoda}/same-picture`, { otherId: boatsRescan, choice: 'use_rescan' });
    expect(again.status).toBe(409);
    expect((await itemRow(pagoda)).original_id).toBe(rescanRow.original_id);
  });
});
