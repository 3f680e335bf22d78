/**
 * One image module: src/lib/restoration/imaging.ts is the only source file that imports sharp,
 * and the modules the web server reads sizes, limits and queue calls from load no image library
 * (libvips is seen, or not, in the process's memory map: Linux proc(5), /proc/self/maps).
 */
import { execFile } from 'node:child_process';
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { describe, expect, it } from 'vitest';

const ROOT = fileURLToPath(new URL('../../..', import.meta.url));
const run = promisify(execFile);

function sources(dir: string): string[] {
  return fs.readdirSync(path.join(ROOT, dir), { withFileTypes: true }).flatMap((e) => {
    const rel = path.join(dir, e.name);
    if (e.isDirectory()) return sources(rel);
    return /\.(ts|tsx|mts|mjs|cjs|js|astro)$/.test(e.name) ? [rel] : [];
  });
}

/** Whether libvips is mapped into a fresh Node process after it imports `modules`. */
async function loadsLibvips(modules: string[]): Promise<boolean> {
  const imports = modules.map((m) => `await import(${JSON.stringify(path.join(ROOT, m))});`).join(' ');
  const code = `${imports} const maps = (await import('node:fs')).readFileSync('/proc/self/maps', 'utf8'); console.log(/libvips/.test(maps) ? 'libvips' : 'none');`;
  const { stdout } = await run(process.execPath, ['--import', 'tsx', '--input-type=module', '-e', code], { cwd: ROOT, env: { ...process.env } });
  return stdout.trim().endsWith('libvips');
}

describe('the image module', () => {
  it('is the only source file that imports sharp', () => {
    const importers = ['src', 'jobs', 'db'].flatMap(sources).filter((f) => /from\s+['"]sharp['"]|require\(\s*['"]sharp['"]\s*\)|import\(\s*['"]sharp['"]\s*\)/.test(fs.readFileSync(path.join(ROOT, f), 'utf8')));
    expect(importers).toEqual([path.join('src', 'lib', 'restoration', 'imaging.ts')]);
  });

  it('is not loaded by the modules the web server reads sizes and limits from', async () => {
    expect(await loadsLibvips(['src/lib/restoration/scan-sizes.ts', 'src/lib/server/body-limits.ts', 'src/lib/server/processing.ts'])).toBe(false);
    // and the check sees it when it is loaded
    expect(await loadsLibvips(['src/lib/restoration/imaging.ts'])).toBe(true);
  }, 60_000);
});
