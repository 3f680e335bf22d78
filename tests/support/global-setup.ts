/**
 * Starts the stack the integration and browser tests talk to: migrations on the throwaway
 * database, then the built web server, one job worker and the mail fake. Unit tests alone
 * (no DRAWERLIGHT_TEST_RUN) start nothing.
 */
import fs from 'node:fs';
import path from 'node:path';
import { closeDb, db } from '../../db/index.ts';
import { openDatabase } from '../../src/lib/server/database.ts';
import { seedDemo } from '../../db/seeders/demo.ts';
import { migrator } from '../../src/lib/server/migrations.ts';
import { startProcess, waitForPort, type StackProcess } from '../../src/scripts/processes.ts';
import { spawnWorker, stopRecordedWorkers } from './processes.ts';

const procs: StackProcess[] = [];

export async function setup() {
  const run = process.env.DRAWERLIGHT_TEST_RUN;
  if (!run) return;
  openDatabase();
  await migrator(db()).up();
  await seedDemo({ withContent: false });
  await closeDb();
  const logs = path.join(run, 'logs');
  fs.mkdirSync(logs, { recursive: true });
  const appPort = Number(new URL(process.env.APP_URL!).port);
  const env = { ...process.env, HOST: '127.0.0.1', PORT: String(appPort) };
  procs.push(startProcess('mail fake', process.execPath, ['--import', 'tsx', 'src/scripts/mail-fake.ts'], env, path.join(logs, 'mail-fake.log')));
  procs.push(startProcess('web server', process.execPath, ['--import', 'tsx', 'src/scripts/serve.ts'], env, path.join(logs, 'server.log')));
  spawnWorker();
  await waitForPort(Number(process.env.SMTP_PORT), 30_000, 'the mail fake');
  await waitForPort(appPort, 60_000, 'the web server');
}

export async function teardown() {
  if (!process.env.DRAWERLIGHT_TEST_RUN) return;
  await stopRecordedWorkers();
  await Promise.all(procs.map((p) => p.stop()));
}
