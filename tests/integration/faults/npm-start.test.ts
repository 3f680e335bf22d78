/**
 * `npm start` as a service manager or `setsid npm start &` runs it: no terminal, its own session.
 * A child that dies (kill -9) is started again with a log line while the others keep serving;
 * SIGINT or SIGTERM to the npm process stops the web server, the worker, the mail fake and the
 * database. The stack gets a PostgreSQL cluster, ports and storage of its own, and the test run's
 * build (it never builds in a test run).
 */
import { execFileSync, spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import pg from 'pg';
import { Sequelize } from 'sequelize';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { migrator } from '../../../src/lib/server/migrations.ts';
import { waitForPort } from '../../../src/scripts/processes.ts';
import type { TestArchive } from '../../support/fixtures.ts';
import { Client } from '../../support/http.ts';
import { freePorts, makeArchiveWithSql } from '../../support/isolated-stack.ts';
import { until } from './helpers.ts';

const ROOT = path.resolve(import.meta.dirname, '../../..');

/** Live (not zombie) processes below `pid`, with their command lines. */
function descendants(pid: number): { pid: number; cmd: string }[] {
  const children = new Map<number, number[]>();
  const cmds = new Map<number, string>();
  for (const name of fs.readdirSync('/proc')) {
    if (!/^\d+$/.test(name)) continue;
    try {
      const stat = fs.readFileSync(`/proc/${name}/stat`, 'utf8');
      const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
      if (fields[0] === 'Z') continue;
      const ppid = Number(fields[1]);
      children.set(ppid, [...(children.get(ppid) ?? []), Number(name)]);
      cmds.set(Number(name), fs.readFileSync(`/proc/${name}/cmdline`, 'utf8').replace(/\0/g, ' '));
    } catch {
      /* gone meanwhile */
    }
  }
  const out: { pid: number; cmd: string }[] = [];
  const walk = (p: number) => {
    for (const c of children.get(p) ?? []) {
      out.push({ pid: c, cmd: cmds.get(c) ?? '' });
      walk(c);
    }
  };
  walk(pid);
  return out;
}

/** The nice value in a /proc stat file (the 19th field). */
function niceOf(statFile: string): number {
  const stat = fs.readFileSync(statFile, 'utf8');
  return Number(stat.slice(stat.lastIndexOf(')') + 2).split(' ')[16]);
}

const ROLES = { 'web server': 'src/scripts/serve.ts', worker: 'jobs/worker.ts', 'mail fake': 'src/scripts/mail-fake.ts' } as const;
type Role = keyof typeof ROLES;

function pidOf(npmPid: number, role: Role): number | undefined {
  return descendants(npmPid).find((p) => p.cmd.includes(ROLES[role]) && !p.cmd.includes('npm'))?.pid;
}

function alive(pid: number): boolean {
  try {
    const stat = fs.readFileSync(`/proc/${pid}/stat`, 'utf8');
    return stat.slice(stat.lastIndexOf(')') + 2)[0] !== 'Z';
  } catch {
    return false;
  }
}

let dir: string;
let env: NodeJS.ProcessEnv;
let pgDir: string;
let appUrl: string;
let smtpPort: number;
let a: TestArchive;
const started: ChildProcess[] = [];
const seen = new Set<number>();

/** `npm start` in a session of its own with no terminal, as `setsid npm start &` runs it. */
async function npmStart(label: string): Promise<{ npm: ChildProcess; log: string }> {
  const log = path.join(dir, `npm-start-${label}.log`);
  const out = fs.openSync(log, 'a');
  const npm = spawn('npm', ['start'], { cwd: ROOT, env, stdio: ['ignore', out, out], detached: true });
  fs.closeSync(out);
  started.push(npm);
  await until('the stack to say it is running', async () => fs.readFileSync(log, 'utf8').includes('Drawerlight is running'), 150_000, () => fs.readFileSync(log, 'utf8').slice(-800));
  for (const role of Object.keys(ROLES) as Role[]) expect(pidOf(npm.pid!, role), role).toBeTruthy();
  for (const p of descendants(npm.pid!)) seen.add(p.pid);
  return { npm, log };
}

/** Everything the stack started is gone and the database is stopped. */
async function expectAllStopped(npm: ChildProcess) {
  await until(
    'the npm process, every child and the database to stop',
    async () => npm.exitCode !== null || npm.signalCode !== null ? descendants(npm.pid!).length === 0 && ![...seen].some(alive) && !fs.existsSync(path.join(pgDir, 'postmaster.pid')) : false,
    40_000,
    () => `npm ${npm.exitCode ?? npm.signalCode ?? 'running'}; alive: ${[...seen].filter(alive).join(', ')}; postmaster.pid: ${fs.existsSync(path.join(pgDir, 'postmaster.pid'))}`,
  );
}

beforeAll(async () => {
  dir = fs.mkdtempSync(path.join(process.env.DRAWERLIGHT_TEST_RUN ?? os.tmpdir(), 'stack-npm-start-'));
  fs.chmodSync(dir, 0o755);
  const storageDir = path.join(dir, 'storage');
  pgDir = path.join(storageDir, 'postgres', 'dev');
  const [pgPort, appPort, smtp] = await freePorts(3);
  smtpPort = smtp;
  appUrl = `http://127.0.0.1:${appPort}`;
  const databaseUrl = `postgres://drawerlight@127.0.0.1:${pgPort}/drawerlight`;
  env = {
    ...process.env,
    APP_ENV: 'test',
    DATABASE_URL: databaseUrl,
    APP_URL: appUrl,
    SMTP_PORT: String(smtpPort),
    STORAGE_DIR: storageDir,
    DRAWERLIGHT_PG_DIR: pgDir,
    DRAWERLIGHT_PG_PORT: String(pgPort),
  };
  delete env.DRAWERLIGHT_TEST_RUN;
  // An archive made before the start, so the stack seeds no demo scans for the worker to chew on.
  fs.mkdirSync(storageDir, { recursive: true });
  execFileSync('bash', [path.join(ROOT, 'db/cluster.sh'), 'ensure', pgDir, String(pgPort), 'drawerlight', 'throwaway'], { stdio: ['ignore', 'ignore', 'inherit'] });
  const sql = new Sequelize(databaseUrl, { dialect: 'postgres', dialectModule: pg, logging: false });
  await migrator(sql, ROOT).up();
  a = await makeArchiveWithSql(sql, 'npmstart');
  await sql.close();
}, 180_000);

afterAll(async () => {
  for (const npm of started) for (const p of descendants(npm.pid!)) seen.add(p.pid);
  for (const pid of seen) if (alive(pid)) process.kill(pid, 'SIGKILL');
  for (const npm of started) if (npm.exitCode === null && npm.signalCode === null) npm.kill('SIGKILL');
  execFileSync('bash', [path.join(ROOT, 'db/cluster.sh'), 'stop', pgDir], { stdio: 'ignore' });
  if (!process.env.KEEP_TEST_RUN) fs.rmSync(dir, { recursive: true, force: true });
});

describe('npm start without a terminal', () => {
  it('starts a child that was killed again, with a log line, while the others keep running; SIGINT then stops everything', async () => {
    const { npm, log } = await npmStart('int');
    const me = () => new Client(a.editor.token, appUrl).get('/api/me');
    expect((await me()).status).toBe(200);
    // The worker, every thread of it, runs 10 steps below the web server's priority (pages and
    // status calls wait for no analysis); the web server keeps the priority npm start has.
    const threadNices = (pid: number) => fs.readdirSync(`/proc/${pid}/task`).map((tid) => niceOf(`/proc/${pid}/task/${tid}/stat`));
    const serverNice = niceOf(`/proc/${pidOf(npm.pid!, 'web server')}/stat`);
    expect(niceOf(`/proc/${npm.pid}/stat`)).toBe(serverNice);
    expect(new Set(threadNices(pidOf(npm.pid!, 'worker')!))).toEqual(new Set([serverNice + 10]));

    for (const role of ['worker', 'web server', 'mail fake'] as Role[]) {
      const before = Object.fromEntries((Object.keys(ROLES) as Role[]).map((r) => [r, pidOf(npm.pid!, r)]));
      process.kill(before[role]!, 'SIGKILL');
      const again = await until(`the ${role} to be started again`, async () => {
        const p = pidOf(npm.pid!, role);
        return p && p !== before[role] ? p : undefined;
      }, 30_000);
      seen.add(again);
      expect(fs.readFileSync(log, 'utf8')).toMatch(new RegExp(`the ${role} stopped unexpectedly \\(SIGKILL\\); starting it again`));
      // The other two were left alone.
      for (const other of (Object.keys(ROLES) as Role[]).filter((r) => r !== role)) expect(pidOf(npm.pid!, other), other).toBe(before[other]);
      if (role === 'web server') await waitForPort(Number(new URL(appUrl).port), 60_000, 'the restarted web server');
      if (role === 'mail fake') await waitForPort(smtpPort, 30_000, 'the restarted mail fake');
      expect((await me()).status).toBe(200);
    }

    process.kill(npm.pid!, 'SIGINT');
    await expectAllStopped(npm);
    expect(fs.readFileSync(log, 'utf8')).toContain('drawerlight: stopped.');
  });

  it('stops everything on SIGTERM to the npm process', async () => {
    const { npm, log } = await npmStart('term');
    process.kill(npm.pid!, 'SIGTERM');
    await expectAllStopped(npm);
    expect(fs.readFileSync(log, 'utf8')).toContain('drawerlight: stopped.');
  });
});
