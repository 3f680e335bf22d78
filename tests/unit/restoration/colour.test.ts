import { describe, expect, it } from 'vitest';
import Color from 'colorjs.io';
import {
  D65_WHITE,
  SRGB_TO_XYZ,
  deltaE2000,
  densityFromReflectance,
  linearSrgbToXyz,
  reflectanceFromDensity,
  srgbDecode,
  srgbEncode,
  srgbToLab,
  srgbToXyz,
  xyzToLab,
  xyzToLinearSrgb,
} from '../../../src/lib/restoration/colour';
import { readTsv } from './fixtures';

describe('sRGB transfer function (IEC 61966-2-1:1999)', () => {
  it('encodes 18 % grey to 0.4613561 (IEC 61966-2-1:1999 transfer function)', () => {
    expect(srgbEncode(0.18)).toBeCloseTo(0.4613561, 7);
  });

  it('uses the linear segment below the thresholds of the standard', () => {
    expect(srgbDecode(0.04)).toBeCloseTo(0.04 / 12.92, 12);
    expect(srgbEncode(0.003)).toBeCloseTo(0.003 * 12.92, 12);
  });

  it('decodes what it encodes across the range', () => {
    for (let i = 0; i <= 1000; i++) expect(srgbDecode(srgbEncode(i / 1000))).toBeCloseTo(i / 1000, 9);
  });

  it('agrees with colorjs.io on decoding (reference library)', () => {
    for (const v of [0.01, 0.2, 0.5, 0.73, 0.99]) {
      const lin = new Color('srgb', [v, v, v]).to('srgb-linear').coords[0];
      expect(srgbDecode(v)).toBeCloseTo(lin, 6);
    }
  });
});

describe('sRGB -> XYZ (IEC 61966-2-1, 4-decimal matrix)', () => {
  it('maps sRGB white to the matrix white with Y = 1 and to a* = b* = 0', () => {
    const xyz = srgbToXyz([1, 1, 1]);
    expect(xyz[1]).toBeCloseTo(1, 12);
    xyz.forEach((v, i) => expect(v).toBeCloseTo(D65_WHITE[i], 12));
    const lab = srgbToLab([1, 1, 1]);
    expect(lab[0]).toBeCloseTo(100, 9);
    expect(Math.abs(lab[1])).toBeLessThan(1e-9);
    expect(Math.abs(lab[2])).toBeLessThan(1e-9);
  });

  it('has the luminance row of the standard', () => {
    expect(SRGB_TO_XYZ[1]).toEqual([0.2126, 0.7152, 0.0722]);
  });

  it('inverts exactly', () => {
    const rgb = [0.3, 0.6, 0.1];
    xyzToLinearSrgb(linearSrgbToXyz(rgb)).forEach((v, i) => expect(v).toBeCloseTo(rgb[i], 12));
  });

  it('agrees with colorjs.io xyz-d65 within the 4-decimal rounding of the matrix', () => {
    for (const rgb of [[0.8, 0.2, 0.1], [0.1, 0.5, 0.9], [0.45, 0.45, 0.45]] as [number, number, number][]) {
      const ref = new Color('srgb', rgb).to('xyz-d65').coords;
      srgbToXyz(rgb).forEach((v, i) => expect(Math.abs(v - ref[i])).toBeLessThan(3e-4));
    }
  });
});

describe('CIELAB (CIE 15:2004)', () => {
  it('reproduces the worked example with a D50 white (colour-science documentation worked example, CIE 15:2004)', () => {
    // D50 white from its chromaticity x = 0.3457, y = 0.3585 (CIE 15:2004)
    const white = [0.3457 / 0.3585, 1, (1 - 0.3457 - 0.3585) / 0.3585];
    const lab = xyzToLab([0.07049534, 0.1008, 0.09558313], white);
    expect(lab[0]).toBeCloseTo(37.9856291, 4);
    expect(lab[1]).toBeCloseTo(-23.6290768, 3);
    expect(lab[2]).toBeCloseTo(-4.4174661, 3);
  });

  it('gives L* = 49.4961 for Y = 0.18 (CIE 15:2004)', () => {
    expect(xyzToLab([0.18 * D65_WHITE[0], 0.18, 0.18 * D65_WHITE[2]])[0]).toBeCloseTo(49.4961, 4);
  });

  it('uses the linear branch below epsilon = 216/24389', () => {
    const y = 0.005;
    expect(xyzToLab([y * D65_WHITE[0], y, y * D65_WHITE[2]])[0]).toBeCloseTo((24389 / 27) * y, 9);
  });

  it('puts the 24-patch chart sRGB averages within 2.5 dE00 of its published Lab (chart24.tsv; Bradford to D50, ICC D50 white)', () => {
    const bradford = [[0.8951, 0.2664, -0.1614], [-0.7502, 1.7135, 0.0367], [0.0389, -0.0685, 1.0296]];
    const d50 = [0.9642, 1, 0.8249];
    const m = (a: number[][], v: number[]) => a.map((r) => r[0] * v[0] + r[1] * v[1] + r[2] * v[2]);
    const inv = (a: number[][]) => {
      const [[p, q, r], [s, t, u], [v, w, x]] = a;
      const det = p * (t * x - u * w) - q * (s * x - u * v) + r * (s * w - t * v);
      return [
        [(t * x - u * w) / det, (r * w - q * x) / det, (q * u - r * t) / det],
        [(u * v - s * x) / det, (p * x - r * v) / det, (r * s - p * u) / det],
        [(s * w - t * v) / det, (q * v - p * w) / det, (p * t - q * s) / det],
      ];
    };
    const coneSrc = m(bradford, D65_WHITE);
    const coneDst = m(bradford, d50);
    const rows = readTsv('chart24.tsv');
    expect(rows).toHaveLength(24);
    for (const row of rows) {
      const xyz = srgbToXyz([+row.BCavg_R / 255, +row.BCavg_G / 255, +row.BCavg_B / 255]);
      const cone = m(bradford, xyz).map((c, i) => (c * coneDst[i]) / coneSrc[i]);
      const lab = xyzToLab(m(inv(bradford), cone), d50);
      expect(deltaE2000(lab, [+row.BCavg_L, +row.BCavg_a, +row.BCavg_b]), row.name).toBeLessThan(2.5);
    }
  });
});

describe('CIEDE2000 (Sharma, Wu & Dalal 2005, Table 1)', () => {
  const pairs = readTsv('ciede2000_sharma2005.tsv');

  it('has all 34 pairs of the paper', () => expect(pairs).toHaveLength(34));

  it.each(pairs)('reproduces pair $pair to 4 decimals, both ways round', (p) => {
    const a = [+p.L1, +p.a1, +p.b1];
    const b = [+p.L2, +p.a2, +p.b2];
    expect(Math.abs(deltaE2000(a, b) - +p.dE00)).toBeLessThan(5e-5);
    expect(Math.abs(deltaE2000(b, a) - +p.dE00)).toBeLessThan(5e-5);
  });

  it('agrees with colorjs.io on every pair and on colours it was not tuned on (reference library)', () => {
    const cases: [number, number, number][][] = pairs.map((p) => [[+p.L1, +p.a1, +p.b1], [+p.L2, +p.a2, +p.b2]]);
    for (let i = 0; i < 40; i++) {
      const t = i / 40;
      cases.push([[20 + 60 * t, 80 * Math.cos(9 * t), 80 * Math.sin(7 * t)], [30 + 50 * t, -60 * Math.sin(5 * t), 70 * Math.cos(3 * t)]]);
    }
    for (const [a, b] of cases) {
      const ref = new Color('lab', a).deltaE(new Color('lab', b), '2000');
      expect(Math.abs(deltaE2000(a, b) - ref)).toBeLessThan(5e-5);
    }
  });

  it('is zero for identical colours', () => expect(deltaE2000([50, 10, -10], [50, 10, -10])).toBe(0));
});

describe('reflection density (ISO 5)', () => {
  it('gives D = 1.0 for reflectance 0.1, and D = 0.70 after a 30 % loss from 1.0 (ISO 5 reflection density; ISO 18909 loss from D = 1.0)', () => {
    expect(densityFromReflectance(0.1)).toBeCloseTo(1, 12);
    expect(densityFromReflectance(reflectanceFromDensity(0.7 * 1.0))).toBeCloseTo(0.7, 12);
    expect(reflectanceFromDensity(0.7)).toBeCloseTo(0.19953, 5);
  });

  it('reads the grey patches of the 24-patch chart at 0.040 ... 1.495 D (the published chart averages, tests/fixtures/chart24.tsv, -log10 Y)', () => {
    const expected = [0.04, 0.23, 0.444, 0.719, 1.049, 1.495];
    const greys = readTsv('chart24.tsv').slice(18);
    greys.forEach((row, i) => {
      const y = srgbToXyz([+row.BCavg_R / 255, +row.BCavg_G / 255, +row.BCavg_B / 255])[1];
      expect(Math.abs(densityFromReflectance(y) - expected[i]), row.name).toBeLessThan(0.01);
    });
  });

  it('never returns infinity for black', () => {
    expect(Number.isFinite(densityFromReflectance(0))).toBe(true);
  });
});
