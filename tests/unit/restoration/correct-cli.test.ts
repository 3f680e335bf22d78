/** The `correct` command line, run as the archivist would, on a small invented batch. */
import { afterAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { AGEING_MODELS, syntheticScan } from '../../../src/lib/demo/synthetic';

const ROOT = fileURLToPath(new URL('../../..', import.meta.url));
const dirs: string[] = [];
afterAll(() => dirs.forEach((d) => rmSync(d, { recursive: true, force: true })));
const run = (args: string[]) => spawnSync(process.execPath, ['--import', 'tsx', join(ROOT, 'src/scripts/correct.ts'), ...args], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 });

describe('npm run correct', () => {
  it('corrects every readable scan, explains the unreadable one in one line, and exits 1 at the end', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'drawerlight-cli-'));
    dirs.push(dir);
    mkdirSync(join(dir, 'box 3'));
    writeFileSync(join(dir, 'box 3', 'lake.jpg'), await syntheticScan({ width: 300, height: 200, border: true, ageing: AGEING_MODELS.darkStorage(1) }));
    writeFileSync(join(dir, 'box 3', 'garden.png'), await syntheticScan({ width: 300, height: 200, format: 'png' }));
    writeFileSync(join(dir, 'box 3', 'list.jpg'), 'not a picture\n');
    writeFileSync(join(dir, 'box 3', 'notes.txt'), 'skipped: not a scan by name\n');
    const out = join(dir, 'out');
    const r = run(['--out', out, '--strength', '0.9', join(dir, 'box 3')]);
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/list\.jpg: not corrected: This is a text file/);
    expect(r.stderr.split('\n').filter((l) => l.includes('list.jpg'))).toHaveLength(1);
    expect(existsSync(join(out, 'lake.jpg'))).toBe(true);
    expect(existsSync(join(out, 'garden.jpg'))).toBe(true);
    const report = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    expect(report.scans).toHaveLength(2);
    expect(report.failures).toEqual([expect.objectContaining({ code: 'unsupported_type' })]);
    const lake = report.scans.find((s: { input: string }) => s.input.endsWith('lake.jpg'));
    // --strength scales the proposal's own strength (which follows how sure the engine is the print aged)
    expect(lake.correction.strength).toBeCloseTo(0.9 * lake.analysis.proposed.strength, 4);
    expect(lake.analysis).toMatchObject({ fadeGrade: expect.any(String), expectedDeltaE00: expect.any(Number) });
    expect(report.scans.find((s: { input: string }) => s.input.endsWith('garden.png')).analysis.paperBase).toBeDefined();
  });

  it('refuses a bad option with usage and status 2', () => {
    const r = run(['--out', '/tmp/x', '--strength', '3', 'a.jpg']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--strength must be a number from 0 to 1/);
  });
});
