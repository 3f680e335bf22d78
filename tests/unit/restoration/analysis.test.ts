/**
 * The analysis's mechanics: what it proposes follows from its estimate as the density model says,
 * a found border is used as the paper base, a batch is combined as described, and the grades keep
 * their published end points. How well the estimate itself holds on real photographs is measured by
 * tests/unit/restoration/real-photos.test.ts and the accuracy lab (`npm run bench:accuracy`).
 */
import { describe, expect, it } from 'vitest';
import { generateScene, type ScenePixels } from '../../../src/lib/demo/synthetic';
import { FADE_GRADE_THRESHOLDS, analysePixels, analysisFromModel, correctionFromAgeing, gradeFade, gradeYellowing, poolAnalyses, strengthFor, type Analysis } from '../../../src/lib/restoration/analysis';
import { densityFromReflectance, reflectanceFromDensity, srgbDecode, srgbEncode } from '../../../src/lib/restoration/colour';
import { applyCorrection, buildChannelLuts, isIdentity } from '../../../src/lib/restoration/correction';
import { PRIORS } from '../../../src/lib/restoration/priors';

const asReduced = (p: ScenePixels) => ({ ...p, depth: 8 as const });

describe('correctionFromAgeing', () => {
  it('undoes D\' = k·D + s per channel (reflection density, ISO 5: D = -log10 R) to within one code', () => {
    const k: [number, number, number] = [0.62, 0.85, 0.78];
    const s: [number, number, number] = [0.02, 0.07, 0.21];
    const fresh = Array.from({ length: 200 }, (_, i) => 10 + i);
    const aged = new Uint8Array(fresh.length * 3);
    fresh.forEach((code, i) => {
      const D = densityFromReflectance(srgbDecode(code / 255));
      for (let c = 0; c < 3; c++) aged[i * 3 + c] = Math.round(srgbEncode(reflectanceFromDensity(k[c] * D + s[c])) * 255);
    });
    const back = applyCorrection(aged, 3, buildChannelLuts(correctionFromAgeing(k, s), 8));
    fresh.forEach((code, i) => {
      for (let c = 0; c < 3; c++) expect(Math.abs(back[i * 3 + c] - code)).toBeLessThanOrEqual(code < 40 ? 3 : 1);
    });
  });

  it('brightens a scan that is lighter than the print was only as far as needed (negative offsets)', () => {
    const c = correctionFromAgeing([1, 1, 1], [-0.05, -0.02, 0]);
    expect(c.whitePoint.every((v) => v <= 1)).toBe(true);
    expect(c.whiteTarget).toBeLessThan(1);
  });

  it('is the identity at strength 0', () => {
    expect(isIdentity(correctionFromAgeing([0.5, 0.8, 0.9], [0, 0.1, 0.3], 0))).toBe(true);
  });
});

describe('analysePixels', () => {
  it('uses a found white border as the paper base, and a border of clean paper white means no stain', () => {
    const a = analysePixels(asReduced(generateScene({ width: 480, height: 320, border: true, seed: 5 })));
    expect(a.paperBase.method).toBe('border');
    expect(a.border.top).toBeGreaterThan(0.03);
    expect(a.stain).toBeLessThan(FADE_GRADE_THRESHOLDS.none.stain);
    expect(a.estimate?.borderStain).toBe(true);
  });

  it('gives every print an expected error and a strength that follows its probability of ageing', () => {
    const a = analysePixels(asReduced(generateScene({ width: 480, height: 320, seed: 7 })));
    expect(a.expectedDeltaE00).toBeGreaterThanOrEqual(0);
    expect(a.estimate!.sdK).toBeGreaterThan(0);
    const t = strengthFor(a.estimate!.aged, PRIORS.decision, a.estimate!.sdK);
    if (t === 0) expect(isIdentity(a.proposed)).toBe(true);
    else expect(a.proposed.strength).toBeCloseTo(t, 3);
    expect(strengthFor(PRIORS.decision.from)).toBe(0);
    expect(strengthFor(PRIORS.decision.to)).toBe(1);
  });

  it('weakens the correction as the estimate of the dyes grows unsure, down to none', () => {
    const decision = { from: 0.5, to: 0.8, unsureFrom: 0.15, unsureTo: 0.3 };
    expect(strengthFor(0.9, decision, 0.1)).toBe(1);
    expect(strengthFor(0.9, decision, 0.15)).toBe(1);
    const between = [0.18, 0.22, 0.26].map((sd) => strengthFor(0.9, decision, sd));
    expect(between[0]).toBeLessThan(1);
    expect(between[1]).toBeLessThan(between[0]);
    expect(between[2]).toBeLessThan(between[1]);
    expect(between[2]).toBeGreaterThan(0);
    expect(strengthFor(0.9, decision, 0.3)).toBe(0);
    // without a weakening rule, doubt about k changes nothing
    expect(strengthFor(0.9, { from: 0.5, to: 0.8 }, 0.5)).toBe(1);
    // both together: half sure that it aged, and half-way unsure
    expect(strengthFor(0.65, decision, 0.225)).toBeCloseTo(0.25, 6);
  });

  it('copes with a 1x1 and a 3x2 image', () => {
    expect(() => analysePixels({ data: new Uint8Array([200, 180, 150]), width: 1, height: 1, channels: 3, depth: 8 })).not.toThrow();
    expect(() => analysePixels({ data: new Uint8Array(18).fill(128), width: 3, height: 2, channels: 3, depth: 8 })).not.toThrow();
  });
});

describe('gradeFade thresholds (ISO 18909: 30 % loss from D = 1.0 as end point; losses under 15-20 % rarely noticed, a film maker\'s published print-life note; stain end point 0.10-0.15, from memory)', () => {
  it('grades the dyes by their loss alone, and the yellowing of the paper by its stain alone', () => {
    expect(FADE_GRADE_THRESHOLDS.moderate.dyeLoss).toBe(0.3);
    expect(gradeFade(0)).toBe('none');
    expect(gradeFade(0.1)).toBe('slight');
    expect(gradeFade(0.2)).toBe('moderate');
    expect(gradeFade(0.3)).toBe('severe');
    expect(gradeYellowing(0)).toBe('none');
    expect(gradeYellowing(0.05)).toBe('slight');
    expect(gradeYellowing(0.12)).toBe('moderate');
    expect(gradeYellowing(0.2)).toBe('severe');
  });

  it('shows a print whose dyes kept all their density but whose paper yellowed as not faded, with yellowed paper', () => {
    // all three dyes at 100 % (k = 1) under a yellow-brown stain, corrected at full strength
    const a = analysisFromModel({ k: [1, 1, 1], s: [0.01, 0.06, 0.2], aged: 1, spreadK: 0.01, spreadS: 0.01 }, { features: [], border: null, monochrome: false });
    expect(a.fadeGrade).toBe('none');
    expect(a.yellowingGrade).toBe('severe');
    expect(a.rescanAdvised).toBe(false);
  });
});

describe('poolAnalyses', () => {
  const withEstimate = (a: Analysis, k: [number, number, number], s: [number, number, number], spreadK: number, borderStain = false): Analysis => ({
    ...a,
    estimate: { k, s, aged: 0.99, spreadK, spreadS: spreadK / 2, borderStain },
  });
  const base = analysePixels(asReduced(generateScene({ width: 240, height: 160, seed: 3 })));

  it('moves an unsure print toward its confident siblings, and a sure one hardly at all', () => {
    const sure = [0, 1, 2].map(() => withEstimate(base, [0.6, 0.8, 0.8], [0.02, 0.06, 0.15], 0.02));
    const unsure = withEstimate(base, [0.95, 0.95, 0.95], [0, 0, 0], 0.3);
    const pooled = poolAnalyses([...sure, unsure]);
    expect(pooled[3].pooled?.siblings).toBe(3);
    expect(Math.abs(pooled[3].estimate!.k[0] - 0.6)).toBeLessThan(0.05);
    expect(pooled[3].estimate!.spreadK).toBeLessThan(0.3);
    expect(Math.abs(pooled[0].estimate!.k[0] - 0.6)).toBeLessThan(0.01);
  });

  it("adds up the pack's evidence of ageing: prints each fairly sure they aged are corrected together, prints each unsure stay as they are", () => {
    const likely = Array.from({ length: 10 }, () => ({ ...withEstimate(base, [0.7, 0.8, 0.8], [0.02, 0.05, 0.1], 0.05), estimate: { k: [0.7, 0.8, 0.8] as [number, number, number], s: [0.02, 0.05, 0.1] as [number, number, number], aged: 0.7, spreadK: 0.05, spreadS: 0.02, borderStain: false } }));
    const pooledLikely = poolAnalyses(likely);
    pooledLikely.forEach((p) => expect(p.estimate!.aged).toBeGreaterThan(0.9));
    expect(isIdentity(pooledLikely[0].proposed)).toBe(false);
    expect(pooledLikely[0].proposed.strength).toBeGreaterThan(strengthFor(0.7));
    const doubtful = likely.map((a) => ({ ...a, estimate: { ...a.estimate!, aged: 0.3 } }));
    poolAnalyses(doubtful).forEach((p) => {
      expect(p.estimate!.aged).toBeLessThan(0.3);
      expect(isIdentity(p.proposed)).toBe(true);
    });
  });

  it('keeps a stain measured on a print\'s own border, and leaves analyses without an estimate as they were', () => {
    const a = withEstimate(base, [0.7, 0.8, 0.8], [0.01, 0.05, 0.2], 0.05, true);
    const b = withEstimate(base, [0.7, 0.8, 0.8], [0.0, 0.0, 0.0], 0.05);
    const old = { ...base, estimate: undefined };
    const pooled = poolAnalyses([a, b, old]);
    expect(pooled[0].estimate!.s).toEqual([0.01, 0.05, 0.2]);
    expect(pooled[2]).toEqual(old);
  });
});
