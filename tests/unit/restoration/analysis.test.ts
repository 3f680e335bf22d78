import { describe, expect, it } from 'vitest';
import { AGEING_MODELS, agePixels, generateScene, type ScenePixels } from '../../../src/lib/demo/synthetic';
import { FADE_GRADE_THRESHOLDS, analysePixels, gradeFade, poolAnalyses } from '../../../src/lib/restoration/analysis';
import { isIdentity } from '../../../src/lib/restoration/correction';

const asReduced = (p: ScenePixels) => ({ ...p, depth: 8 as const });

function crop(p: ScenePixels, x0: number, y0: number, w: number, h: number): ScenePixels {
  const data = new Uint8Array(w * h * 3);
  for (let y = 0; y < h; y++) data.set(p.data.subarray(((y0 + y) * p.width + x0) * 3, ((y0 + y) * p.width + x0 + w) * 3), y * w * 3);
  return { data, width: w, height: h, channels: 3 };
}

/** Retention relative to the best-kept dye: what the engine can measure (see analysis.ts). */
const relative = (k: number[]) => k.map((x) => (100 * x) / Math.max(...k));

describe('analysePixels', () => {
  it('grades an unaged print none and proposes no change', () => {
    for (const border of [true, false]) {
      const a = analysePixels(asReduced(generateScene({ width: 480, height: 320, border, seed: 5 })));
      expect(a.fadeGrade).toBe('none');
      expect(isIdentity(a.proposed)).toBe(true);
    }
  });

  it('finds the white border when there is one, and the highlights otherwise', () => {
    const aged = AGEING_MODELS.darkStorage(1);
    const withBorder = analysePixels(asReduced(agePixels(generateScene({ width: 480, height: 320, border: true }), aged)));
    expect(withBorder.paperBase.method).toBe('border');
    expect(withBorder.border.top).toBeGreaterThan(0.03);
    const without = analysePixels(asReduced(agePixels(generateScene({ width: 480, height: 320 }), aged)));
    expect(without.paperBase.method).toBe('highlight');
    // a stained paper base is yellow: positive b* and a clear distance from neutral
    expect(withBorder.paperBase.lab[2]).toBeGreaterThan(5);
    expect(withBorder.paperBase.deltaE00FromWhite).toBeGreaterThan(3);
  });

  it.each([
    ['dark storage', AGEING_MODELS.darkStorage(1)],
    ['light fading', AGEING_MODELS.lightFaded(1)],
    ['half dark storage', AGEING_MODELS.darkStorage(0.5)],
  ])('measures dye retention within 3 points and stain within 0.02 D of the ageing model (%s; model invented for the demo)', (_, ageing) => {
    const a = analysePixels(asReduced(agePixels(generateScene({ width: 480, height: 320, border: true, seed: 2 }), ageing)));
    const want = relative(ageing.retention);
    const got = [a.dyes.cyan.remainingPercent, a.dyes.magenta.remainingPercent, a.dyes.yellow.remainingPercent];
    got.forEach((g, i) => expect(Math.abs(g - want[i])).toBeLessThan(3));
    const stainWant = ageing.stain.map((s, i) => s + ageing.retention[i] * 0.04);
    const floor = Math.min(...stainWant);
    const stainGot = [a.dyes.cyan.stainDensity, a.dyes.magenta.stainDensity, a.dyes.yellow.stainDensity];
    stainGot.forEach((g, i) => expect(Math.abs(g - (stainWant[i] - floor))).toBeLessThan(0.02));
  });

  it('flags a black-and-white print as monochrome', () => {
    const a = analysePixels(asReduced(agePixels(generateScene({ width: 480, height: 320, monochrome: true, border: true }), AGEING_MODELS.yellowedMonochrome(1))));
    expect(a.monochrome).toBe(true);
    expect(a.dyes.yellow.stainDensity).toBeGreaterThan(0.15);
  });

  it('copes with a 1x1 and a 3x2 image', () => {
    expect(() => analysePixels({ data: new Uint8Array([200, 180, 150]), width: 1, height: 1, channels: 3, depth: 8 })).not.toThrow();
    expect(analysePixels({ data: new Uint8Array(18).fill(128), width: 3, height: 2, channels: 3, depth: 8 }).fadeGrade).toBe('none');
  });
});

describe('gradeFade thresholds (CHECKS.md: ISO 18909 30 % end point; under 15-20 % rarely noticed; stain end point 0.10-0.15, from memory)', () => {
  it('places the published end points', () => {
    expect(FADE_GRADE_THRESHOLDS.moderate.dyeLoss).toBe(0.3);
    expect(gradeFade(0, 0)).toBe('none');
    expect(gradeFade(0.1, 0)).toBe('slight');
    expect(gradeFade(0.2, 0)).toBe('moderate');
    expect(gradeFade(0.3, 0)).toBe('severe');
    expect(gradeFade(0.05, 0.12)).toBe('moderate');
    expect(gradeFade(0.05, 0.2)).toBe('severe');
  });
});

describe('poolAnalyses', () => {
  it('gives a low-confidence print of mostly one colour the estimate of its pack, and leaves confident prints alone', () => {
    const ageing = AGEING_MODELS.darkStorage(1);
    const pack = [1, 2, 3].map((seed) => analysePixels(asReduced(agePixels(generateScene({ width: 480, height: 320, border: true, seed }), ageing))));
    // sky only: no neutrals, no shadows, one colour
    const skyScene = crop(generateScene({ width: 480, height: 320, seed: 4 }), 20, 10, 400, 100);
    const sky = analysePixels(asReduced(agePixels(skyScene, ageing)));
    expect(sky.confidence).toBeLessThan(0.5);
    const pooled = poolAnalyses([...pack, sky]);
    pooled.slice(0, 3).forEach((p, i) => expect(p).toEqual(pack[i]));
    const last = pooled[3];
    expect(last.pooled?.siblings).toBe(3);
    const want = relative(ageing.retention);
    expect(Math.abs(last.dyes.cyan.remainingPercent - want[0])).toBeLessThan(Math.abs(sky.dyes.cyan.remainingPercent - want[0]) + 1e-9);
    expect(Math.abs(last.dyes.cyan.remainingPercent - want[0])).toBeLessThan(8);
  });
});

describe('samplePixels', () => {
  it('gives the same grade and estimates, within a point, as the full-size scene', async () => {
    const { samplePixels } = await import('../../../src/lib/restoration/analysis');
    const ageing = AGEING_MODELS.lightFaded(1);
    const big = agePixels(generateScene({ width: 960, height: 640, border: true, seed: 9 }), ageing);
    const small = samplePixels({ ...big, depth: 8 }, 480);
    expect([small.width, small.height]).toEqual([480, 320]);
    const a = analysePixels(asReduced(big));
    const b = analysePixels(small);
    expect(b.fadeGrade).toBe(a.fadeGrade);
    expect(Math.abs(a.dyes.magenta.remainingPercent - b.dyes.magenta.remainingPercent)).toBeLessThan(1);
    expect(Math.abs(a.dyes.yellow.stainDensity - b.dyes.yellow.stainDensity)).toBeLessThan(0.01);
  });
});
