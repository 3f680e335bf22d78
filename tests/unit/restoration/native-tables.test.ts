import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { Worker } from 'node:worker_threads';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { applyCorrection, buildChannelLuts, identityCorrection } from '../../../src/lib/restoration/correction';
import { correctionFromEstimate } from '../../../src/lib/restoration/analysis';
import { renderCorrected } from '../../../src/lib/restoration/imaging';
import { applyTablesNatively, configureNativeTables, nativeTables, nativeTablesStatus } from '../../../src/lib/restoration/native-tables';
import { AGEING_MODELS, agePixels, encodeScene, generateScene } from '../../../src/lib/demo/synthetic';

const ROOT = fileURLToPath(new URL('../../..', import.meta.url));

/** Pixels every byte value of which occurs in every channel, in an order no table could guess (xorshift, invented for the test). */
function noise(bytes: number, seed: number): Uint8Array {
  const out = new Uint8Array(bytes);
  let x = seed >>> 0 || 1;
  for (let i = 0; i < bytes; i++) {
    x ^= x << 13;
    x ^= x >>> 17;
    x ^= x << 5;
    out[i] = x & 255;
  }
  return out;
}

// the reference is the engine's own table step, correction.ts: the native one must give its bytes exactly
const CORRECTIONS = {
  'a dark-storage fade with stain': correctionFromEstimate([0.55, 0.9, 0.8], [0.02, 0.06, 0.18], 0.05),
  'a light fade': correctionFromEstimate([0.95, 0.6, 0.85], [0, 0.03, 0.1], 0.04),
  'a half-strength correction': { ...correctionFromEstimate([0.7, 0.8, 0.9], [0, 0.05, 0.12], 0.05), strength: 0.5 },
  'no correction at all': identityCorrection(),
};

describe('the native table step (native-tables.ts)', () => {
  it('is compiled and loaded on this machine (Debian gcc and the nodejs headers)', () => {
    const status = nativeTablesStatus();
    expect(status.reason).toBeUndefined();
    expect(status.loaded).toBe(true);
    expect(nativeTables()).not.toBeNull();
  });

  for (const [name, correction] of Object.entries(CORRECTIONS)) {
    it(`gives applyCorrection's bytes exactly for ${name}, large and small, in place and into another buffer`, () => {
      const luts = buildChannelLuts(correction, 8, 8);
      // 3 MB takes the pair-table path; 3003 bytes the byte loop; 1,048,587 bytes (349,529 pixels)
      // the pair tables with one pixel after the last group of four
      for (const bytes of [3 * 1024 * 1024, 3003, 1_048_587]) {
        const source = noise(bytes, bytes);
        const expected = applyCorrection(source, 3, luts) as Uint8Array;
        const into = new Uint8Array(bytes);
        expect(applyTablesNatively(source, 3, luts, into)).toBe(true);
        expect(Buffer.compare(into, expected)).toBe(0);
        const inPlace = source.slice();
        expect(applyTablesNatively(inPlace, 3, luts, inPlace)).toBe(true);
        expect(Buffer.compare(inPlace, expected)).toBe(0);
      }
    });
  }

  it('reads pixels at any byte offset (a Buffer from the middle of a larger one)', () => {
    const luts = buildChannelLuts(CORRECTIONS['a light fade'], 8, 8);
    const whole = noise(3 * 500_001 + 1, 7);
    const view = whole.subarray(1);
    const expected = applyCorrection(view, 3, luts) as Uint8Array;
    const out = new Uint8Array(view.length + 4).subarray(3, 3 + view.length);
    applyTablesNatively(view, 3, luts, out);
    expect(Buffer.compare(out, expected)).toBe(0);
  });

  it('leaves what it does not handle to applyCorrection: RGBA, 16-bit tables, 16-bit output', () => {
    const pixels = noise(4 * 100, 3);
    expect(applyTablesNatively(pixels, 4, buildChannelLuts(identityCorrection(), 8, 8), pixels)).toBe(false);
    expect(applyTablesNatively(pixels, 3, buildChannelLuts(identityCorrection(), 16, 8), pixels)).toBe(false);
    expect(applyTablesNatively(pixels, 3, buildChannelLuts(identityCorrection(), 8, 16), pixels)).toBe(false);
  });

  it('refuses bad arguments with an error instead of touching memory it was not given', () => {
    const addon = nativeTables()!;
    const t = new Uint8Array(256);
    const px = new Uint8Array(30);
    expect(() => addon.applyRgb8(new Uint8Array(31), new Uint8Array(31), t, t, t)).toThrow(/whole RGB pixels/);
    expect(() => addon.applyRgb8(px, new Uint8Array(27), t, t, t)).toThrow(/at least as many bytes/);
    expect(() => addon.applyRgb8(px, px, t, t, new Uint8Array(255))).toThrow(/256 entries/);
    expect(() => addon.applyRgb8(new Uint16Array(30) as unknown as Uint8Array, px, t, t, t)).toThrow(/Uint8Arrays/);
    expect(() => addon.applyRgb8(px.subarray(0, 27), px.subarray(3), t, t, t)).toThrow(/overlaps/);
    expect(() => (addon.applyRgb8 as unknown as (a: unknown) => void)(px)).toThrow(/three tables/);
  });
});

describe('the native table step in engine threads', () => {
  it('compiles once and loads in several threads starting together from an empty cache', async () => {
    const cache = mkdtempSync(join(tmpdir(), 'drawerlight-native-threads-'));
    try {
      const replies = await Promise.all(
        [0, 1, 2].map(
          () =>
            new Promise<{ status: { loaded: boolean; path?: string }; first: number; last: number }>((resolve, reject) => {
              const w = new Worker(new URL('./native-tables-thread.mjs', import.meta.url), { workerData: { cacheDir: cache } });
              w.once('message', (m) => void w.terminate().then(() => resolve(m)));
              w.once('error', reject);
            }),
        ),
      );
      for (const r of replies) {
        expect(r.status.loaded).toBe(true);
        expect(r.status.path?.startsWith(cache)).toBe(true);
        expect([r.first, r.last]).toEqual([245, 245]);
      }
    } finally {
      rmSync(cache, { recursive: true, force: true });
    }
  });
});

describe('without the native table step', () => {
  const cache = mkdtempSync(join(tmpdir(), 'drawerlight-native-'));
  afterAll(() => rmSync(cache, { recursive: true, force: true }));

  /** Runs `code` (an ES module body) in a child process with `env`, through tsx, and returns what it printed. */
  function child(code: string, env: Record<string, string>): string {
    return execFileSync(process.execPath, ['--import', 'tsx', '--input-type=module', '-e', code], { cwd: ROOT, encoding: 'utf8', env: { ...process.env, ...env } });
  }

  it('says why when there is no C compiler, and the engine still renders, to the same bytes', async () => {
    const scan = await encodeScene(agePixels(generateScene({ width: 360, height: 240, border: true, seed: 4 }), AGEING_MODELS.darkStorage(1)), { format: 'jpeg', quality: 92 });
    const scanFile = join(cache, 'scan.jpg');
    writeFileSync(scanFile, scan);
    const correction = CORRECTIONS['a dark-storage fade with stain'];
    const code = `
      import { readFileSync } from 'node:fs';
      import { configureNativeTables, nativeTablesStatus } from './src/lib/restoration/native-tables.ts';
      import { renderCorrected } from './src/lib/restoration/imaging.ts';
      configureNativeTables({ cacheDir: ${JSON.stringify(join(cache, 'empty'))} });
      const r = await renderCorrected(readFileSync(${JSON.stringify(scanFile)}), ${JSON.stringify(correction)});
      process.stdout.write(JSON.stringify({ status: nativeTablesStatus(), jpeg: r.buffer.toString('base64') }));`;
    // no cc on PATH and an empty cache: nothing to load, nothing to compile with
    const out = JSON.parse(child(code, { PATH: '/nonexistent' })) as { status: { loaded: boolean; reason: string }; jpeg: string };
    expect(out.status.loaded).toBe(false);
    expect(out.status.reason).toMatch(/cc/);
    const native = await renderCorrected(scan, correction);
    expect(nativeTablesStatus().loaded).toBe(true);
    expect(Buffer.compare(Buffer.from(out.jpeg, 'base64'), native.buffer)).toBe(0);
  });

  it('says why when its folder cannot be written to, and leaves the pixels to applyCorrection', () => {
    const luts = buildChannelLuts(CORRECTIONS['a light fade'], 8, 8);
    const pixels = noise(3000, 6);
    // a folder inside a file: no one, root included, can make it
    const file = join(mkdtempSync(join(tmpdir(), 'drawerlight-native-file-')), 'a-file');
    writeFileSync(file, 'not a folder');
    try {
      configureNativeTables({ cacheDir: join(file, 'cache') });
      const status = nativeTablesStatus();
      expect(status.loaded).toBe(false);
      expect(status.reason).toMatch(/ENOTDIR/);
      expect(applyTablesNatively(pixels, 3, luts, pixels)).toBe(false);
    } finally {
      configureNativeTables({});
      rmSync(dirname(file), { recursive: true, force: true });
    }
  });

  it('can be turned off, and says so', () => {
    const luts = buildChannelLuts(CORRECTIONS['a light fade'], 8, 8);
    const pixels = noise(3000, 5);
    try {
      configureNativeTables({ enabled: false });
      expect(nativeTablesStatus()).toEqual({ loaded: false, reason: 'turned off (configureNativeTables)' });
      expect(applyTablesNatively(pixels, 3, luts, pixels)).toBe(false);
    } finally {
      configureNativeTables({});
    }
    expect(nativeTablesStatus().loaded).toBe(true);
  });
});
