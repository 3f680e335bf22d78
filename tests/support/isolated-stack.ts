/**
 * A stack of its own for one test file that kills servers and restarts PostgreSQL: a throwaway
 * PostgreSQL cluster on free ports (db/cluster.sh), the migrations, the run's built web server,
 * job worker(s) and the mail fake, each with its own STORAGE_DIR, APP_URL, SMTP_PORT and
 * DATABASE_URL, so the other test files, running in parallel against the shared stack of the test
 * run, are not disturbed. The test reads this stack's database through a Sequelize connection of its
 * own (db/index.ts's points at the shared test database).
 */
import { spawn, execFileSync, type ChildProcess } from 'node:child_process';
import { createHash, randomBytes } from 'node:crypto';
import fs from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import pg from 'pg';
import { QueryTypes, Sequelize } from 'sequelize';
import type { Role } from '../../src/lib/auth/roles.ts';
import { migrator } from '../../src/lib/server/migrations.ts';
import { hashPassword } from '../../src/lib/server/passwords.ts';
import { waitForPort, workerEnv } from '../../src/scripts/processes.ts';
import type { TestArchive, TestMember } from './fixtures.ts';
import { TEST_PASSWORD } from './fixtures.ts';
import { Client } from './http.ts';

const ROOT = path.resolve(import.meta.dirname, '../..');

/** Free TCP ports on 127.0.0.1, the way tests/run.sh finds them. */
export async function freePorts(n: number): Promise<number[]> {
  const servers: net.Server[] = [];
  const ports: number[] = [];
  for (let i = 0; i < n; i++) {
    const s = net.createServer();
    await new Promise<void>((r) => s.listen(0, '127.0.0.1', () => r()));
    ports.push((s.address() as net.AddressInfo).port);
    servers.push(s);
  }
  // All held open until every port is picked, so the same port is not handed out twice.
  await Promise.all(servers.map((s) => new Promise((r) => s.close(r))));
  return ports;
}

/** One child process of the stack, killable with any signal. */
class Proc {
  child: ChildProcess;
  private exited: Promise<void>;
  constructor(
    readonly name: string,
    args: string[],
    env: NodeJS.ProcessEnv,
    log: string,
  ) {
    const out = fs.openSync(log, 'a');
    this.child = spawn(process.execPath, args, { cwd: ROOT, env, stdio: ['ignore', out, out] });
    fs.closeSync(out);
    this.exited = new Promise((r) => this.child.once('exit', () => r()));
  }
  get running(): boolean {
    return this.child.exitCode === null && this.child.signalCode === null;
  }
  /** Sends `signal` and waits until the process is gone (SIGKILL after 15 s). */
  async stop(signal: NodeJS.Signals = 'SIGTERM'): Promise<void> {
    if (!this.running) return;
    this.child.kill(signal);
    const timer = setTimeout(() => this.child.kill('SIGKILL'), 15_000);
    await this.exited;
    clearTimeout(timer);
  }
}

export interface IsolatedStackOptions {
  /** Names the folder and the database. */
  label: string;
  /** Where originals and renders go (default: a folder in the stack's own directory). */
  storageDir?: string;
  /** How many workers to start (default 1; 0 for none). */
  workers?: number;
  /** Extra environment for the server and the workers. */
  env?: Record<string, string>;
}

export interface IsolatedStack {
  dir: string;
  appUrl: string;
  databaseUrl: string;
  storageDir: string;
  /** This stack's database, for the test's own reads. */
  sql: Sequelize;
  /** Raw SELECT against this stack's database. */
  query<T = Record<string, unknown>>(text: string, replacements?: Record<string, unknown>): Promise<T[]>;
  /** A client of this stack's web server (with an API token, or cookies when none). */
  client(token?: string): Client;
  /** An archive with an owner, an editor and a viewer (API tokens and the test password), made with SQL. */
  makeArchive(label?: string): Promise<TestArchive>;
  startServer(): Promise<void>;
  /** Stops the web server with `signal` (SIGKILL: kill -9). */
  stopServer(signal?: NodeJS.Signals): Promise<void>;
  /** Starts one more worker; returns its index. */
  startWorker(): number;
  /** Stops every worker with `signal`. */
  stopWorkers(signal?: NodeJS.Signals): Promise<void>;
  workerPids(): number[];
  /** Stops the mail fake (the SMTP server is down: connections are refused). */
  stopMail(): Promise<void>;
  /** Starts the mail fake again and waits for its port. */
  startMail(): Promise<void>;
  /** The web server's pid while it runs. */
  serverPid(): number | undefined;
  stopPostgres(): void;
  startPostgres(): void;
  /** Stops everything and removes the stack's folder (kept with KEEP_TEST_RUN). */
  stop(): Promise<void>;
}

/** Starts a whole stack for one test file; call `stop()` in afterAll. */
export async function startIsolatedStack(opts: IsolatedStackOptions): Promise<IsolatedStack> {
  const outDir = process.env.DRAWERLIGHT_OUT_DIR;
  if (!outDir) throw new Error('DRAWERLIGHT_OUT_DIR is not set: run the tests through npm test (tests/run.sh builds the app).');
  const parent = process.env.DRAWERLIGHT_TEST_RUN ?? os.tmpdir();
  const dir = fs.mkdtempSync(path.join(parent, `stack-${opts.label}-`));
  fs.chmodSync(dir, 0o755);
  const logs = path.join(dir, 'logs');
  fs.mkdirSync(logs, { recursive: true });
  const [pgPort, appPort, smtpPort] = await freePorts(3);
  const pgDir = path.join(dir, 'pg');
  const database = `drawerlight_${opts.label.replace(/[^a-z0-9]/gi, '_').toLowerCase()}`;
  const cluster = (...args: string[]) => execFileSync('bash', [path.join(ROOT, 'db/cluster.sh'), ...args], { stdio: ['ignore', 'ignore', 'inherit'] });
  const startPostgres = () => cluster('ensure', pgDir, String(pgPort), database, 'throwaway');
  const stopPostgres = () => cluster('stop', pgDir);
  startPostgres();

  const databaseUrl = `postgres://drawerlight@127.0.0.1:${pgPort}/${database}`;
  const appUrl = `http://127.0.0.1:${appPort}`;
  const storageDir = opts.storageDir ?? path.join(dir, 'storage');
  fs.mkdirSync(storageDir, { recursive: true });
  const env: NodeJS.ProcessEnv = {
    ...process.env,
    APP_ENV: 'test',
    DATABASE_URL: databaseUrl,
    APP_URL: appUrl,
    SMTP_PORT: String(smtpPort),
    STORAGE_DIR: storageDir,
    HOST: '127.0.0.1',
    PORT: String(appPort),
    DRAWERLIGHT_OUT_DIR: outDir,
    ...(opts.env ?? {}),
  };
  // Nothing of the shared run's: its pid folder is for the shared workers only.
  delete env.DRAWERLIGHT_TEST_RUN;

  const sql = new Sequelize(databaseUrl, {
    dialect: 'postgres',
    dialectModule: pg,
    logging: false,
    pool: { max: 3, min: 0, idle: 5_000, acquire: 30_000 },
    retry: { max: 5, match: [/ECONNREFUSED/, /ECONNRESET/, /the database system is (starting up|shutting down)/, /terminating connection/, /Connection terminated/] },
  });
  await migrator(sql, ROOT).up();

  const mailFake = () => new Proc('mail fake', ['--import', 'tsx', 'src/scripts/mail-fake.ts'], env, path.join(logs, 'mail-fake.log'));
  let mail = mailFake();
  let server: Proc | undefined;
  const workers: Proc[] = [];
  let workerCount = 0;

  const stack: IsolatedStack = {
    dir,
    appUrl,
    databaseUrl,
    storageDir,
    sql,
    query: <T>(text: string, replacements: Record<string, unknown> = {}) => sql.query(text, { replacements, type: QueryTypes.SELECT }) as unknown as Promise<T[]>,
    client: (token?: string) => new Client(token, appUrl),
    makeArchive: (label = 'faults') => makeArchiveWithSql(sql, label),
    async startServer() {
      if (server?.running) return;
      server = new Proc('web server', ['--import', 'tsx', 'src/scripts/serve.ts'], env, path.join(logs, 'server.log'));
      await waitForPort(appPort, 60_000, 'the isolated web server');
    },
    async stopServer(signal: NodeJS.Signals = 'SIGTERM') {
      await server?.stop(signal);
    },
    startWorker() {
      const n = ++workerCount;
      workers.push(new Proc(`worker ${n}`, ['--import', 'tsx', 'jobs/worker.ts'], workerEnv(env), path.join(logs, `worker-${n}.log`)));
      return n;
    },
    async stopWorkers(signal: NodeJS.Signals = 'SIGTERM') {
      await Promise.all(workers.map((w) => w.stop(signal)));
      workers.length = 0;
    },
    workerPids: () => workers.filter((w) => w.running).map((w) => w.child.pid!),
    stopMail: () => mail.stop(),
    async startMail() {
      if (mail.running) return;
      mail = mailFake();
      await waitForPort(smtpPort, 30_000, 'the isolated mail fake');
    },
    serverPid: () => (server?.running ? server.child.pid : undefined),
    stopPostgres,
    startPostgres,
    async stop() {
      await Promise.all([server?.stop(), mail.stop(), ...workers.map((w) => w.stop())]);
      await sql.close().catch(() => undefined);
      stopPostgres();
      if (!process.env.KEEP_TEST_RUN) fs.rmSync(dir, { recursive: true, force: true });
    },
  };
  try {
    await waitForPort(smtpPort, 30_000, 'the isolated mail fake');
    await stack.startServer();
    for (let i = 0; i < (opts.workers ?? 1); i++) stack.startWorker();
  } catch (err) {
    await stack.stop();
    throw err;
  }
  return stack;
}

let hashed: Promise<string> | undefined;

/**
 * The same archive as tests/support/fixtures.ts's makeArchive (owner, editor, viewer, each with an
 * API token and the test password), written with SQL into another database than the shared one.
 * Tokens are stored as their SHA-256, as src/lib/server/api-tokens.ts does.
 */
export async function makeArchiveWithSql(sql: Sequelize, label: string): Promise<TestArchive> {
  hashed ??= hashPassword(TEST_PASSWORD);
  const passwordHash = await hashed;
  const tag = `${label}-${randomBytes(4).toString('hex')}`.toLowerCase().replace(/[^a-z0-9-]/g, '-');
  const one = async (text: string, replacements: Record<string, unknown>) =>
    ((await sql.query(text, { replacements, type: QueryTypes.SELECT })) as { id: string }[])[0].id;
  const archiveId = await one('INSERT INTO archives (slug, name) VALUES (:tag, :name) RETURNING id', { tag, name: `Archive ${tag}` });
  const make = async (role: Role): Promise<TestMember> => {
    const email = `${role}.${tag}@test.example`;
    const userId = await one('INSERT INTO users (email, name, password_hash) VALUES (:email, :name, :passwordHash) RETURNING id', { email, name: `${role} ${tag}`, passwordHash });
    await sql.query('INSERT INTO memberships (archive_id, user_id, role) VALUES (:archiveId, :userId, :role)', { replacements: { archiveId, userId, role } });
    const token = 'dlt_' + randomBytes(32).toString('base64url');
    await sql.query('INSERT INTO api_tokens (user_id, name, token_hash, prefix) VALUES (:userId, :name, :hash, :prefix)', {
      replacements: { userId, name: `${role} test token`, hash: createHash('sha256').update(token).digest('hex'), prefix: token.slice(0, 10) },
    });
    return { id: userId, email, role, token };
  };
  return { id: archiveId, slug: tag, name: `Archive ${tag}`, owner: await make('owner'), editor: await make('editor'), viewer: await make('viewer') };
}
