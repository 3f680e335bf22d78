import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';

const ROOT = fileURLToPath(new URL('../../..', import.meta.url));
const LAUNCHER = join(ROOT, 'src/scripts/bundled.cjs');
// a script of its own under tests/artifacts (ignored by git): the launcher bundles scripts of this checkout
const DIR = join(ROOT, 'tests/artifacts/bundled-launcher');
const SCRIPT = join(DIR, 'echo.ts');
const CODE_CACHE = join(ROOT, 'node_modules/.cache/drawerlight-bundled/tests__artifacts__bundled-launcher__echo.cjs.v8cache');

const run = (...args: string[]) => spawnSync(process.execPath, [LAUNCHER, ...args], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 });

function writeScript(word: string): void {
  mkdirSync(DIR, { recursive: true });
  // imports a package (bundled with it) and one of our sources, and uses its arguments and exit status
  writeFileSync(
    SCRIPT,
    `import { z } from 'zod';\nimport { srgbDecode } from '../../../src/lib/restoration/colour';\nconst args: string[] = process.argv.slice(2);\nprocess.stdout.write(${JSON.stringify(word)} + ' ' + z.array(z.string()).parse(args).join(',') + ' ' + srgbDecode(1) + '\\n');\nprocess.exitCode = args.length;\n`,
  );
}

afterAll(() => rmSync(DIR, { recursive: true, force: true }));

describe('src/scripts/bundled.cjs (how `npm run correct` starts)', () => {
  it('builds a bundle of a script and its imports, and runs it with its own arguments and exit status', () => {
    writeScript('first');
    const r = run(SCRIPT, 'a', 'b c');
    expect(r.stderr).toBe('');
    expect(r.stdout).toBe('first a,b c 1\n');
    expect(r.status).toBe(2);
  });

  it('builds the bundle again when the script changes', () => {
    writeScript('second');
    const r = run(SCRIPT, 'x');
    expect(r.stdout).toBe('second x 1\n');
    expect(r.status).toBe(1);
  });

  it('keeps V8\'s code cache of the bundle after a run, and makes a damaged one again', () => {
    writeScript('third');
    expect(run(SCRIPT, 'y').stdout).toBe('third y 1\n');
    expect(existsSync(CODE_CACHE)).toBe(true);
    const made = readFileSync(CODE_CACHE);
    expect(made.length).toBeGreaterThan(1000);
    // with the cache: the same output
    expect(run(SCRIPT, 'y').stdout).toBe('third y 1\n');
    // V8 refuses a cache that is not its own; the run goes on and writes a good one at exit
    writeFileSync(CODE_CACHE, 'not a code cache');
    const r = run(SCRIPT, 'z');
    expect(r.stderr).toBe('');
    expect(r.stdout).toBe('third z 1\n');
    expect(readFileSync(CODE_CACHE).length).toBeGreaterThan(1000);
  });

  it('makes the code cache again for a bundle built again', () => {
    const before = readFileSync(CODE_CACHE);
    writeScript('fourth');
    expect(run(SCRIPT).stdout).toBe('fourth  1\n');
    const after = readFileSync(CODE_CACHE);
    expect(Buffer.compare(before, after)).not.toBe(0);
    expect(run(SCRIPT, 'w').stdout).toBe('fourth w 1\n');
  });

  it('runs the command line itself', () => {
    const r = run('src/scripts/correct.ts', '--help');
    expect(r.status).toBe(0);
    expect(r.stdout).toContain('Usage: npm run correct -- --out <dir>');
  });

  it('refuses to start without a script', () => {
    const r = spawnSync(process.execPath, [LAUNCHER], { cwd: ROOT, encoding: 'utf8' });
    expect(r.status).toBe(2);
    expect(r.stderr).toContain('usage: node src/scripts/bundled.cjs <script.ts>');
  });
});
