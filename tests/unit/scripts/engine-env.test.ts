import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
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
});
