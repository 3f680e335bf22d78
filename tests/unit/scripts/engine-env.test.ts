import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { JEMALLOC, JEMALLOC_CONF, workerEnv } from '../../../src/scripts/processes';

const WRAPPER = fileURLToPath(new URL('../../../src/scripts/engine-env.sh', import.meta.url));

describe('engine-env.sh (the allocator settings of `npm run correct` and `npm run worker`)', () => {
  it('sets the same jemalloc settings as the worker that `npm start` runs', () => {
    const out = execFileSync('sh', [WRAPPER, 'sh', '-c', 'printf "%s|%s" "$LD_PRELOAD" "$MALLOC_CONF"'], { encoding: 'utf8', env: { PATH: process.env.PATH } });
    const env = workerEnv({});
    if (existsSync(JEMALLOC)) {
      expect(out).toBe(`${JEMALLOC}|${JEMALLOC_CONF}`);
      expect(env).toMatchObject({ LD_PRELOAD: JEMALLOC, MALLOC_CONF: JEMALLOC_CONF });
    } else {
      // without Debian's libjemalloc2 both leave the environment alone
      expect(out).toBe('|');
      expect(env.LD_PRELOAD).toBeUndefined();
    }
  });

  it('passes the arguments through unchanged and returns the exit status', () => {
    const r = spawnSync('sh', [WRAPPER, 'sh', '-c', 'echo "$1 $2"; exit 7', 'x', 'two words', 'three'], { encoding: 'utf8', env: { PATH: process.env.PATH } });
    expect(r.status).toBe(7);
    expect(r.stdout).toBe('two words three\n');
  });

  it('with --offline (`npm run correct`) drops NODE_EXTRA_CA_CERTS and only that', () => {
    const env = { PATH: process.env.PATH, NODE_EXTRA_CA_CERTS: '/etc/ssl/certs/ca-certificates.crt', KEEP: 'kept' };
    const show = ['sh', '-c', 'printf "%s|%s|%s" "${NODE_EXTRA_CA_CERTS-unset}" "$KEEP" "$1"', 'sh', 'arg'];
    expect(execFileSync('sh', [WRAPPER, '--offline', ...show], { encoding: 'utf8', env })).toBe('unset|kept|arg');
    // without it (`npm run worker`, which may connect to a mail server over TLS) the variable stays
    expect(execFileSync('sh', [WRAPPER, ...show], { encoding: 'utf8', env })).toBe('/etc/ssl/certs/ca-certificates.crt|kept|arg');
  });

  it('is what `npm run correct` runs, with --offline', () => {
    const pkg = JSON.parse(readFileSync(fileURLToPath(new URL('../../../package.json', import.meta.url)), 'utf8')) as { scripts: Record<string, string> };
    expect(pkg.scripts.correct).toMatch(/^sh src\/scripts\/engine-env\.sh --offline node /);
    expect(pkg.scripts.worker).not.toContain('--offline');
  });
});
