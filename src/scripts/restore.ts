/** `npm run restore -- <dir>`: restores a backup into an empty install (empty database and storage). */
import { QueryTypes } from 'sequelize';
import { closeDb, db } from '../../db/index.ts';
import { openDatabase } from '../lib/server/database.ts';
import { restore } from '../lib/server/backup.ts';

openDatabase();

const dir = process.argv[2];
if (!dir) {
  console.error('usage: npm run restore -- <backup folder>');
  process.exit(2);
}
try {
  const s = await restore(dir, {
    tablesInDatabase: async () => {
      const rows = await db().query<{ n: string }>(`SELECT count(*) AS n FROM pg_tables WHERE schemaname = 'public'`, { type: QueryTypes.SELECT });
      return Number(rows[0].n);
    },
  });
  console.log(`restored the backup of ${s.createdAt}: database + ${s.files} file(s)`);
} catch (err) {
  console.error(`restore failed: ${(err as Error).message}`);
  process.exitCode = 1;
} finally {
  await closeDb();
}
