/** `npm run migrate [-- --down all|N]`: applies (or reverts) the migrations in db/migrations. */
import { parseArgs } from 'node:util';
import { closeDb, db } from '../../db/index.ts';
import { openDatabase } from '../lib/server/database.ts';
import { migrator } from '../lib/server/migrations.ts';

openDatabase();

const { values } = parseArgs({ options: { down: { type: 'string' } } });
const m = migrator(db());
try {
  if (values.down) {
    const done = values.down === 'all' ? await m.down({ to: 0 }) : await m.down({ step: Number(values.down) });
    console.log(`reverted ${done.length} migration(s)`);
  } else {
    const done = await m.up();
    if (done.length) console.log(`applied ${done.length} migration(s): ${done.map((d) => d.name).join(', ')}`);
  }
} finally {
  await closeDb();
}
