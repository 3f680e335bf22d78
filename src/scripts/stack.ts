/**
 * What `npm start` runs after the shell bootstrap: migrate, seed a new database with the demo,
 * build, then serve with the worker and the mail fake. A child that dies is started again with
 * backoff and a log line; only Ctrl-C (SIGINT), SIGTERM or SIGHUP stops them all and the database.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { closeDb, db } from '../../db/index.ts';
import { openDatabase } from '../lib/server/database.ts';
import { config } from '../lib/server/config.ts';
import { migrator } from '../lib/server/migrations.ts';
import { portFree, startProcess, waitForPort, WORKER_NICENESS, workerEnv, type StackProcess } from './processes.ts';
import { DEMO_PASSWORD, DEMO_USERS, seedDemo } from '../../db/seeders/demo.ts';

openDatabase();

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

/**
 * Builds unless the build (DRAWERLIGHT_OUT_DIR, as astro.config.mjs names it) is newer than every
 * source file: a second start skips the build. A test run's stack never builds: tests/run.sh made
 * its build, which the other tests of the run are using.
 */
function build() {
  const entry = path.join(root, process.env.DRAWERLIGHT_OUT_DIR ?? 'dist/app', 'server/entry.mjs');
  if (c.env === 'test' && fs.existsSync(entry)) return;
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
let stopping = false;

/** First wait before restarting a child that died; doubled after each quick death, up to MAX. */
const RESTART_FIRST_MS = 1000;
const RESTART_MAX_MS = 30_000;
/** A child that ran this long before dying is restarted after the first wait again. */
const HEALTHY_AFTER_MS = 60_000;

/**
 * One child of the stack, started again with backoff whenever it dies (a crash must not cut the
 * uploads the web server is taking, nor stop the worker's queue), until the stack stops.
 */
class Supervised {
  current: StackProcess;
  private startedAt = Date.now();
  private delay = RESTART_FIRST_MS;
  private timer: NodeJS.Timeout | undefined;
  restarts = 0;

  constructor(
    readonly name: string,
    private readonly launch: () => StackProcess,
  ) {
    this.current = this.start();
  }

  private start(): StackProcess {
    const p = this.launch();
    this.startedAt = Date.now();
    p.child.once('exit', (code, signal) => {
      if (stopping) return;
      if (Date.now() - this.startedAt >= HEALTHY_AFTER_MS) this.delay = RESTART_FIRST_MS;
      const wait = this.delay;
      this.delay = Math.min(RESTART_MAX_MS, this.delay * 2);
      this.restarts++;
      console.error(`drawerlight: the ${this.name} stopped unexpectedly (${signal ?? `exit ${code}`}); starting it again in ${wait / 1000} s (restart ${this.restarts}; logs in ${logDir})`);
      this.timer = setTimeout(() => {
        this.timer = undefined;
        if (!stopping) this.current = this.start();
      }, wait);
    });
    return p;
  }

  async stop(): Promise<void> {
    clearTimeout(this.timer);
    await this.current.stop();
  }
}

const procs = [
  new Supervised('mail fake', () => startProcess('mail fake', process.execPath, ['--import', 'tsx', 'src/scripts/mail-fake.ts'], env, path.join(logDir, 'mail-fake.log'))),
  new Supervised('web server', () => startProcess('web server', process.execPath, ['--import', 'tsx', 'src/scripts/serve.ts'], env)),
  // below the web server's priority: a status call or a page waits for no analysis (nice execs, so the pid is the worker's)
  new Supervised('worker', () => startProcess('worker', 'nice', ['-n', WORKER_NICENESS, process.execPath, '--import', 'tsx', 'jobs/worker.ts'], workerEnv(env), path.join(logDir, 'worker.log'))),
];

async function stopAll(code: number) {
  if (stopping) return;
  stopping = true;
  console.log('\ndrawerlight: stopping the web server, the worker, the mail fake and the database ...');
  await Promise.all(procs.map((p) => p.stop()));
  if (process.env.DRAWERLIGHT_PG_DIR) execFileSync('bash', ['db/cluster.sh', 'stop', process.env.DRAWERLIGHT_PG_DIR], { stdio: 'inherit' });
  console.log('drawerlight: stopped.');
  process.exit(code);
}
// Only these stop the whole stack; a child that dies is started again (Supervised).
process.on('SIGINT', () => void stopAll(0));
process.on('SIGTERM', () => void stopAll(0));
process.on('SIGHUP', () => void stopAll(0));

await waitForPort(port, 60_000, 'the web server');
console.log(`
  Drawerlight is running at ${c.appUrl}
  Demo sign-in (password for all three: ${DEMO_PASSWORD})
${DEMO_USERS.map((u) => `    ${u.role.padEnd(7)} ${u.email}`).join('\n')}
  Outbox of the mail fake: ${c.appUrl}/outbox
  Logs of the worker and the mail fake: ${logDir}
  Press Ctrl-C to stop everything.
`);
