import { spawnSync } from 'node:child_process';
import { mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';

const ROOT = fileURLToPath(new URL('../../..', import.meta.url));
const LAUNCHER = join(ROOT, 'src/scripts/bundled.cjs');
// a script of its own under tests/artifacts (ignored by git): the launcher bundles scripts of this checkout
const DIR = join(ROOT, 'tests/artifacts/bundled-launcher');
const SCRIPT = join(DIR, 'echo.ts');

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
