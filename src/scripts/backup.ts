/** `npm run backup -- <dir>`: a consistent pg_dump plus the originals and renders, with checksums. */
import { closeDb } from '../../db/index.ts';
import { openDatabase } from '../lib/server/database.ts';
import { backup } from '../lib/server/backup.ts';

openDatabase();

const dir = process.argv[2];
if (!dir) {
  console.error('usage: npm run backup -- <empty or new folder>');
  process.exit(2);
}
try {
  const s = await backup(dir);
  console.log(`backup written to ${dir}: database + ${s.files} file(s), ${(s.bytes / 1024 / 1024).toFixed(1)} MB`);
} catch (err) {
  console.error(`backup failed: ${(err as Error).message}`);
  process.exitCode = 1;
} finally {
  await closeDb();
}
