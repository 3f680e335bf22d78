/**
 * Worker processes of a test run, recorded by pid under the run folder so a test can kill -9
 * one mid-batch and start another, and the global teardown still stops whatever is left.
 */
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { workerEnv } from '../../src/scripts/processes.ts';

function pidDir(): string {
  const dir = path.join(process.env.DRAWERLIGHT_TEST_RUN!, 'pids');
  fs.mkdirSync(dir, { recursive: true });
  return dir;
}

/** Starts a job worker (detached from the test process) and records its pid. */
export function spawnWorker(name = 'worker'): number {
  const log = fs.openSync(path.join(process.env.DRAWERLIGHT_TEST_RUN!, 'logs', `${name}.log`), 'a');
  const child = spawn(process.execPath, ['--import', 'tsx', 'jobs/worker.ts'], { env: workerEnv(process.env), stdio: ['ignore', log, log], detached: true });
  child.unref();
  fs.writeFileSync(path.join(pidDir(), `${child.pid}.pid`), String(child.pid));
  return child.pid!;
}

function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

/** Sends `signal` to a recorded worker and waits until it is gone. */
export async function stopWorker(pid: number, signal: NodeJS.Signals = 'SIGTERM', timeoutMs = 20_000): Promise<void> {
  try {
    process.kill(pid, signal);
  } catch {
    /* already gone */
  }
  const deadline = Date.now() + timeoutMs;
  while (alive(pid) && Date.now() < deadline) await new Promise((r) => setTimeout(r, 100));
  if (alive(pid)) process.kill(pid, 'SIGKILL');
  fs.rmSync(path.join(pidDir(), `${pid}.pid`), { force: true });
}

/** Every worker pid recorded in this run. */
export function recordedWorkers(): number[] {
  return fs.readdirSync(pidDir()).map((f) => Number(f.replace('.pid', ''))).filter((p) => p > 0);
}

export async function stopRecordedWorkers(): Promise<void> {
  await Promise.all(recordedWorkers().map((p) => stopWorker(p)));
}
