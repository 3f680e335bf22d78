/** `npm run seed`: seeds the demo archive into an empty database (does nothing otherwise). */
import { closeDb } from '../../db/index.ts';
import { openDatabase } from '../lib/server/database.ts';
import { seedDemo } from '../../db/seeders/demo.ts';

openDatabase();

try {
  console.log((await seedDemo()) ? 'demo archive seeded' : 'the database already has archives: nothing seeded');
} finally {
  await closeDb();
}
