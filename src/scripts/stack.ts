/**
 * What `npm start` runs after the shell bootstrap: migrate, seed a new database with the demo,
 * build, then serve with the worker and the mail fake; Ctrl-C stops them all and the database.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { closeDb, db } from '../../db/index.ts';
import { config } from '../lib/server/config.ts';
import { migrator } from '../lib/server/migrations.ts';
import { portFree, startProcess, waitForPort, workerEnv, type StackProcess } from './processes.ts';
import { DEMO_PASSWORD, DEMO_USERS, seedDemo } from '../../db/seeders/demo.ts';

const root = process.cwd();
const c = config();
const port = Number(new URL(c.appUrl).port || 4321);
const logDir = path.join(c.storageDir, 'logs');
fs.mkdirSync(logDir, { recursive: true });

function newestMtime(dir: string): number {
  let newest = 0;
  for (const e of fs.readdirSync(dir, { withFileTypes: true })) {
    const p = path.join(dir, e.name);
    if (e.isDirectory()) newest = Math.max(newest, newestMtime(p));
    else newest = Math.max(newest, fs.statSync(p).mtimeMs);
  }
  return newest;
}

/** Builds unless dist/ is newer than every source file (a second start skips the build). */
function build() {
  const entry = path.join(root, 'dist/app/server/entry.mjs');
  const sources = Math.max(
    newestMtime(path.join(root, 'src')),
    newestMtime(path.join(root, 'db')),
    newestMtime(path.join(root, 'public')),
    ...['astro.config.mjs', 'tailwind.config.mjs', 'package-lock.json'].map((f) => fs.statSync(path.join(root, f)).mtimeMs),
  );
  if (fs.existsSync(entry) && fs.statSync(entry).mtimeMs > sources) {
    console.log('drawerlight: the build is up to date');
    return;
  }
  console.log('drawerlight: building ...');
  const r = spawnSync('npx', ['astro', 'build'], { stdio: ['ignore', 'inherit', 'inherit'], env: process.env });
  if (r.status !== 0) throw new Error('the build failed (see above)');
}

const done = await migrator(db()).up();
if (done.length) console.log(`drawerlight: applied ${done.length} migration(s)`);
const seeded = await seedDemo();
if (seeded) console.log('drawerlight: new database: demo archive seeded');
await closeDb();
build();

for (const [p, what] of [[port, 'the web server'], [c.smtp.port, 'the mail fake']] as const) {
  if (!(await portFree(p))) {
    console.error(`drawerlight: port ${p} for ${what} is in use. Is another \`npm start\` running? Stop it, or set APP_URL / SMTP_PORT.`);
    process.exit(1);
  }
}

const env = { ...process.env, HOST: '127.0.0.1', PORT: String(port) };
const procs: StackProcess[] = [
  startProcess('mail fake', process.execPath, ['--import', 'tsx', 'src/scripts/mail-fake.ts'], env, path.join(logDir, 'mail-fake.log')),
  startProcess('web server', process.execPath, ['--import', 'tsx', 'src/scripts/serve.ts'], env),
  startProcess('worker', process.execPath, ['--import', 'tsx', 'jobs/worker.ts'], workerEnv(env), path.join(logDir, 'worker.log')),
];

let stopping = false;
async function stopAll(code: number) {
  if (stopping) return;
  stopping = true;
  console.log('\ndrawerlight: stopping the web server, the worker, the mail fake and the database ...');
  await Promise.all(procs.map((p) => p.stop()));
  if (process.env.DRAWERLIGHT_PG_DIR) execFileSync('bash', ['db/cluster.sh', 'stop', process.env.DRAWERLIGHT_PG_DIR], { stdio: 'inherit' });
  console.log('drawerlight: stopped.');
  process.exit(code);
}
process.on('SIGINT', () => void stopAll(0));
process.on('SIGTERM', () => void stopAll(0));
for (const p of procs) {
  p.child.once('exit', (code, signal) => {
    if (!stopping) {
      console.error(`drawerlight: the ${p.name} stopped unexpectedly (${signal ?? `exit ${code}`}); logs in ${logDir}`);
      void stopAll(1);
    }
  });
}

await waitForPort(port, 60_000, 'the web server');
console.log(`
  Drawerlight is running at ${c.appUrl}
  Demo sign-in (password for all three: ${DEMO_PASSWORD})
${DEMO_USERS.map((u) => `    ${u.role.padEnd(7)} ${u.email}`).join('\n')}
  Outbox of the mail fake: ${c.appUrl}/outbox
  Logs of the worker and the mail fake: ${logDir}
  Press Ctrl-C to stop everything.
`);
