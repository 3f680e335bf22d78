/**
 * The look-up half of `npm run bench:duplicates`: how long finding the same picture across an
 * archive of 10 000 prints takes in PostgreSQL, the way the analysis asks it (nearPrints of
 * src/lib/server/same-picture.ts over items.fingerprint). Runs on a throwaway cluster of its own
 * (db/cluster.sh, fsync off), migrated as the app is, and removed afterwards.
 * The archive: the benchmark's own scans' fingerprints plus random ones up to 10 000 prints, each
 * row with an analysis of a real print's size. The floor, measured in the same run: one pass over
 * the same prints counting them (the index read with no distance taken), and a one-row read by
 * primary key (a round trip).
 */
import { execFileSync } from 'node:child_process';
import { chmodSync, mkdtempSync, rmSync } from 'node:fs';
import { randomBytes } from 'node:crypto';
import { join } from 'node:path';
import { QueryTypes } from 'sequelize';
import { Archive, closeDb, db, openDb } from '../../db/index.ts';
import { migrator } from '../../src/lib/server/migrations.ts';
import { nearPrints } from '../../src/lib/server/same-picture.ts';
import { freePorts } from '../support/isolated-stack.ts';

export interface LookupFigures {
  prints: number;
  lookupMs: number;
  floorCountMs: number;
  floorRoundTripMs: number;
  plan: string;
  /** Share of the queries whose expected print the database found within the distance. */
  foundShare: number;
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

/**
 * Fills an archive with `prints` prints: first the `stored` fingerprints, then random ones; then
 * times nearPrints for each query (the query's expected print is `expect[i]`, an index into `stored`, or -1).
 */
export async function measureLookup(stored: string[], queries: { fingerprint: string; expect: number }[], prints = 10_000): Promise<LookupFigures> {
  const dir = mkdtempSync('/tmp/drawerlight-bench-lookup.');
  chmodSync(dir, 0o755);
  const [port] = await freePorts(1);
  const cluster = join(process.cwd(), 'db/cluster.sh');
  execFileSync('bash', [cluster, 'ensure', join(dir, 'pg'), String(port), 'drawerlight_bench', 'throwaway'], { stdio: ['ignore', 'ignore', 'inherit'] });
  try {
    openDb({ url: `postgres://drawerlight@127.0.0.1:${port}/drawerlight_bench`, poolMax: 2 });
    await migrator(db()).up();
    const archive = await Archive.create({ slug: 'lookup-bench', name: 'Look-up bench' });
    const fingerprints = [...stored, ...Array.from({ length: Math.max(0, prints - stored.length) }, () => randomBytes(16).toString('hex'))];
    const [batch] = await db().query<{ id: string }>(`INSERT INTO batches (archive_id, name) VALUES (:a, 'Everything') RETURNING id`, { replacements: { a: archive.id }, type: QueryTypes.SELECT });
    // an analysis of about the size a real print's has, so the rows are as wide as they are in use
    const analysis = JSON.stringify({ filler: 'x'.repeat(2500) });
    await db().query(
      `WITH o AS (
         INSERT INTO originals (archive_id, sha256, storage_key, bytes, mime)
         SELECT :a, md5(n::text) || md5((n + 1)::text), 'originals/' || n, 1, 'image/jpeg' FROM generate_series(1, :n) AS n
         RETURNING id, storage_key)
       INSERT INTO items (archive_id, batch_id, original_id, seq, original_name, state, analysis, fingerprint)
       SELECT :a, :b, o.id, n, 'scan-' || n || '.jpg', 'ready', :analysis::jsonb, ('x' || f.hex)::bit(128)
         FROM o JOIN unnest(ARRAY[:hexes]::text[]) WITH ORDINALITY AS f(hex, n) ON o.storage_key = 'originals/' || f.n`,
      { replacements: { a: archive.id, b: batch.id, n: fingerprints.length, hexes: fingerprints, analysis } },
    );
    await db().query('VACUUM ANALYZE items');
    const ids = await db().query<{ id: string; seq: number }>('SELECT id, seq FROM items WHERE archive_id = :a', { replacements: { a: archive.id }, type: QueryTypes.SELECT });
    const idOfSeq = new Map(ids.map((r) => [Number(r.seq), r.id]));

    const [plan] = await db().query<{ 'QUERY PLAN': string }>(
      `EXPLAIN SELECT id FROM items WHERE archive_id = :a AND fingerprint IS NOT NULL AND deleted_at IS NULL AND bit_count(fingerprint # ('x' || :f)::bit(128)) <= 38`,
      { replacements: { a: archive.id, f: queries[0].fingerprint }, type: QueryTypes.SELECT },
    );
    const time = async (run: () => Promise<unknown>) => {
      const t0 = performance.now();
      await run();
      return performance.now() - t0;
    };
    // one warm-up pass, then the measured ones
    for (const q of queries.slice(0, 5)) await nearPrints(archive.id, q.fingerprint);
    const lookups: number[] = [];
    let found = 0;
    let expected = 0;
    for (const q of queries) {
      let near: Awaited<ReturnType<typeof nearPrints>> = [];
      lookups.push(await time(async () => (near = await nearPrints(archive.id, q.fingerprint))));
      if (q.expect >= 0) {
        expected++;
        if (near.some((n) => n.id === idOfSeq.get(q.expect + 1))) found++;
      }
    }
    const counts: number[] = [];
    const trips: number[] = [];
    for (let i = 0; i < queries.length; i++) {
      counts.push(await time(() => db().query('SELECT count(*) FROM items WHERE archive_id = :a AND fingerprint IS NOT NULL AND deleted_at IS NULL', { replacements: { a: archive.id }, type: QueryTypes.SELECT })));
      trips.push(await time(() => db().query('SELECT id FROM items WHERE id = :id', { replacements: { id: ids[i % ids.length].id }, type: QueryTypes.SELECT })));
    }
    return {
      prints: fingerprints.length,
      lookupMs: median(lookups),
      floorCountMs: median(counts),
      floorRoundTripMs: median(trips),
      plan: plan['QUERY PLAN'].replace(/\s+on\s.*$/, '').trim(),
      foundShare: expected ? found / expected : 0,
    };
  } finally {
    await closeDb();
    execFileSync('bash', [cluster, 'stop', join(dir, 'pg')], { stdio: 'ignore' });
    rmSync(dir, { recursive: true, force: true });
  }
}
