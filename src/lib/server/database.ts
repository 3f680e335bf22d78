/** The database of this process (web server, worker, command line): db/index.ts opened with the settings of config.ts. */
import type { Sequelize } from 'sequelize';
import { openDb } from '../../../db/index.ts';
import { config } from './config.ts';

/** Opens the database with DATABASE_URL; every entry point calls it before its first query. */
export function openDatabase(): Sequelize {
  return openDb({ url: config().databaseUrl });
}
