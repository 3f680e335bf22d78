import { describe, expect, it } from 'vitest';
import {
  applyCorrection,
  buildChannelLuts,
  correctionSchema,
  identityCorrection,
  isIdentity,
  CorrectionInputError,
} from '../../../src/lib/restoration/correction';
import { correctionFromEstimate } from '../../../src/lib/restoration/analysis';
import { srgbDecode, srgbEncode } from '../../../src/lib/restoration/colour';

/** The first-approximation ageing model of reflection density (ISO 5: D = -log10 R; slope change and offset per McCormick-Goodhart & Wilhelm 2003), written out here independently of the engine: D' = k·D + s. */
function ageCode(code: number, k: number, s: number): number {
  const d = -Math.log10(Math.max(srgbDecode(code / 255), 1e-6));
  return Math.round(srgbEncode(Math.pow(10, -(k * d + s))) * 255);
}

describe('correction format', () => {
  it('accepts the identity correction and round-trips through JSON', () => {
    const c = identityCorrection();
    expect(correctionSchema.parse(JSON.parse(JSON.stringify(c)))).toEqual(c);
    expect(isIdentity(c)).toBe(true);
  });

  it('refuses an unknown version, a strength out of 0..1, unknown keys and a non-finite gain', () => {
    const c = identityCorrection();
    expect(correctionSchema.safeParse({ ...c, version: 2 }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, strength: 1.5 }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, extra: 1 }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, curves: { ...c.curves, red: { densityGain: Number.NaN } } }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, whitePoint: [1, 1] }).success).toBe(false);
  });
});

describe('channel tables', () => {
  it('leave every code value alone for the identity, at 8 and 16 bits', () => {
    for (const depth of [8, 16] as const) {
      const luts = buildChannelLuts(identityCorrection(), depth);
      const max = depth === 8 ? 255 : 65535;
      for (let i = 0; i <= max; i += depth === 8 ? 1 : 97) {
        expect(luts.red[i]).toBe(i);
        expect(luts.blue[i]).toBe(i);
      }
    }
  });

  it('leave a print on neutral paper alone whatever that paper lightness', () => {
    const c = { ...identityCorrection(), whitePoint: [0.93, 0.93, 0.93] as [number, number, number] };
    const luts = buildChannelLuts(c, 8);
    for (let i = 0; i < 256; i++) expect(luts.green[i]).toBe(i);
  });

  it('undo the density model D\' = k·D + s to within one code value (density model of ISO 5 reflection density, aged independently above)', () => {
    const k = [0.6, 1, 0.8];
    const s = [0, 0.05, 0.2];
    const paper = 0.04;
    // paper base as scanned after ageing: k·Dpaper + s; relative to its least dense channel
    const paperAged = k.map((kc, i) => kc * paper + s[i]);
    const floor = Math.min(...paperAged);
    const c = correctionFromEstimate(k as [number, number, number], paperAged.map((d) => d - floor) as [number, number, number], floor);
    const luts = buildChannelLuts(c, 8);
    const tables = [luts.red, luts.green, luts.blue];
    for (let ch = 0; ch < 3; ch++) {
      // codes from paper white down to D = 1.6; deeper, 8-bit steps of the faded channel are too coarse
      for (let code = 40; code <= 244; code++) {
        const restored = tables[ch][ageCode(code, k[ch], s[ch])];
        const expected = srgbEncode(Math.pow(10, -(-Math.log10(srgbDecode(code / 255)) - paper + floor))) * 255;
        expect(Math.abs(restored - expected), `channel ${ch} code ${code}`).toBeLessThanOrEqual(code < 80 && ch === 0 ? 3 : 1.5);
      }
    }
  });

  it('blend toward identity with strength: 0 changes nothing, 0.5 changes less than 1', () => {
    const full = correctionFromEstimate([0.6, 1, 0.8], [0, 0.05, 0.2], 0.04);
    const none = buildChannelLuts({ ...full, strength: 0 }, 8);
    const half = buildChannelLuts({ ...full, strength: 0.5 }, 8);
    const all = buildChannelLuts(full, 8);
    let halfChange = 0;
    let fullChange = 0;
    for (let i = 0; i < 256; i++) {
      expect(none.red[i]).toBe(i);
      halfChange += Math.abs(half.blue[i] - i) + Math.abs(half.red[i] - i);
      fullChange += Math.abs(all.blue[i] - i) + Math.abs(all.red[i] - i);
    }
    expect(halfChange).toBeGreaterThan(0.3 * fullChange);
    expect(halfChange).toBeLessThan(0.7 * fullChange);
  });

  it('are monotone, so no tone is ever inverted', () => {
    const luts = buildChannelLuts(correctionFromEstimate([0.4, 0.9, 0.7], [0, 0.1, 0.3], 0.05), 16, 8);
    let inversions = 0;
    for (const t of [luts.red, luts.green, luts.blue]) for (let i = 1; i < t.length; i++) if (t[i] < t[i - 1]) inversions++;
    expect(inversions).toBe(0);
  });
});

describe('applyCorrection', () => {
  it('passes alpha through and maps 16-bit input to 8-bit output', () => {
    const luts = buildChannelLuts(identityCorrection(), 16, 8);
    const out = applyCorrection(new Uint16Array([65535, 0, 32896, 65535]), 4, luts);
    expect(Array.from(out)).toEqual([255, 0, 128, 255]);
  });

  it('refuses greyscale pixels with a typed error', () => {
    expect(() => applyCorrection(new Uint8Array(9), 1, buildChannelLuts(identityCorrection(), 8))).toThrow(CorrectionInputError);
  });

  it('corrects in place when given its own buffer', () => {
    const data = new Uint8Array([200, 180, 120]);
    const luts = buildChannelLuts(correctionFromEstimate([1, 1, 1], [0, 0.05, 0.2], 0.04), 8);
    const out = applyCorrection(data, 3, luts, data);
    expect(out).toBe(data);
    expect(data[2]).toBeGreaterThan(120);
  });
});
