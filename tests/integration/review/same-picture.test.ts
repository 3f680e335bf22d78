/**
 * The same picture twice, through the real pipeline: scans uploaded through the API, analysed by
 * the real worker (which stores each print's fingerprint and looks across the archive), the
 * print's page (its API), checked in the database.
 * The scans: lab photographs (tests/lab/photos.ts) as a faded print scan and as a clean rescan from
 * the negative with another crop and exposure (tests/support/same-picture-scans.ts, as
 * `npm run bench:duplicates` makes them). Which pictures should match is known by construction.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { QueryTypes } from 'sequelize';
import { closeDb, db } from '../../../db/index.ts';
import { loadPhoto, PHOTOS } from '../../lab/photos.ts';
import { rng } from '../../lab/simulator.ts';
import { asToken, makeArchive, type TestArchive } from '../../support/fixtures.ts';
import { batchOfScans, cleanRescan, fadedScan } from '../../support/same-picture-scans.ts';
import { until } from '../../support/until.ts';

let a: TestArchive;
let b: TestArchive;
let editor: ReturnType<typeof asToken>;

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
  });

  it('gives a print analysed before fingerprints were kept the same fingerprint its analysis would have stored', async () => {
    const coffee = shoebox.ids[1];
    const stored = (await itemRow(coffee)).fingerprint;
    await db().query('UPDATE items SET fingerprint = NULL WHERE id = :id', { replacements: { id: coffee } });
    const filled = await until('the worker fingerprints the print again', async () => (await itemRow(coffee)).fingerprint, 90_000);
    expect(filled).toBe(stored);
  });
});
