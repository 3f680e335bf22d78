import { randomBytes } from 'node:crypto';
import pg from 'pg';
import { Sequelize } from 'sequelize';
import { afterAll, describe, expect, it } from 'vitest';
import { migrator } from '../../../src/lib/server/migrations.ts';

// A database of its own, so reverting every migration does not disturb the other tests.
const name = `migrations_${randomBytes(4).toString('hex')}`;
const base = new URL(process.env.DATABASE_URL!);
const admin = new pg.Client({ connectionString: base.toString() });
const target = new URL(base);
target.pathname = `/${name}`;
let sequelize: Sequelize;

async function tables(): Promise<string[]> {
  const [rows] = await sequelize.query(`SELECT tablename FROM pg_tables WHERE schemaname = 'public' AND tablename <> 'SequelizeMeta' ORDER BY 1`);
  return (rows as { tablename: string }[]).map((r) => r.tablename);
}

afterAll(async () => {
  await sequelize?.close();
  await admin.query(`DROP DATABASE IF EXISTS "${name}"`);
  await admin.end();
});

describe('migrations', () => {
  it('apply in order, revert to an empty schema, and apply again', async () => {
    await admin.connect();
    await admin.query(`CREATE DATABASE "${name}"`);
    sequelize = new Sequelize(target.toString(), { dialect: 'postgres', dialectModule: pg, logging: false });
    const m = migrator(sequelize);
    const applied = await m.up();
    expect(applied.length).toBeGreaterThanOrEqual(2);
    expect(await tables()).toEqual(expect.arrayContaining(['users', 'archives', 'memberships', 'invitations', 'api_tokens', 'audit_events', 'batches', 'items', 'originals', 'corrections']));

    await m.down({ to: 0 });
    expect(await tables()).toEqual([]);
    const [types] = await sequelize.query(`SELECT typname FROM pg_type t JOIN pg_namespace n ON n.oid = t.typnamespace WHERE n.nspname = 'public' AND t.typtype = 'e'`);
    expect(types).toEqual([]);

    const again = await m.up();
    expect(again.map((x) => x.name)).toEqual(applied.map((x) => x.name));
    expect((await m.pending()).length).toBe(0);
  });
});
