import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import net from 'node:net';

/** A child process of the stack (web server, worker, mail fake), with its output sent to a log. */
export interface StackProcess {
  name: string;
  child: ChildProcess;
  stop(signal?: NodeJS.Signals): Promise<void>;
}

export const JEMALLOC = '/usr/lib/x86_64-linux-gnu/libjemalloc.so.2';
/**
 * jemalloc set to keep a finished scan's memory for the next one (one arena, no decay): see
 * src/scripts/engine-env.sh, which sets the same for `npm run correct` and `npm run worker`.
 */
export const JEMALLOC_CONF = 'narenas:1,dirty_decay_ms:-1,muzzy_decay_ms:-1';

/**
 * How far below the web server a job worker runs (`nice -n`): the worker keeps both cores busy through
 * a sitting, and a person waiting on a page or a status call should not wait behind an analysis.
 * The worker loses nothing when the web server is idle.
 */
export const WORKER_NICENESS = '10';

/** Environment for the image worker: jemalloc (when installed), set as src/scripts/engine-env.sh sets it. */
export function workerEnv(env: NodeJS.ProcessEnv): NodeJS.ProcessEnv {
  return fs.existsSync(JEMALLOC) ? { ...env, LD_PRELOAD: JEMALLOC, MALLOC_CONF: JEMALLOC_CONF } : env;
}

/** Starts `cmd args` with `env`, writing stdout and stderr to `logFile` (or inheriting them). */
export function startProcess(name: string, cmd: string, args: string[], env: NodeJS.ProcessEnv, logFile?: string): StackProcess {
  const out = logFile ? fs.openSync(logFile, 'a') : 'inherit';
  const child = spawn(cmd, args, { env, stdio: ['ignore', out, out] });
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
  return {
    name,
    child,
    async stop(signal: NodeJS.Signals = 'SIGTERM') {
      if (child.exitCode !== null || child.signalCode !== null) return;
      child.kill(signal);
      const timer = setTimeout(() => child.kill('SIGKILL'), 15_000);
      await exited;
      clearTimeout(timer);
    },
  };
}

/** Resolves once something accepts TCP connections on 127.0.0.1:port. */
export async function waitForPort(port: number, timeoutMs = 60_000, what = `port ${port}`): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    const ok = await new Promise<boolean>((resolve) => {
      const s = net.connect({ host: '127.0.0.1', port }, () => {
        s.end();
        resolve(true);
      });
      s.on('error', () => resolve(false));
    });
    if (ok) return;
    await new Promise((r) => setTimeout(r, 200));
  }
  throw new Error(`${what} did not come up within ${timeoutMs / 1000} s`);
}

/** True when nothing listens on 127.0.0.1:port. */
export function portFree(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const srv = net.createServer();
    srv.once('error', () => resolve(false));
    srv.listen(port, '127.0.0.1', () => srv.close(() => resolve(true)));
  });
}
