/** The review workbench's pure helpers: value lists in step with the models, adjustments, the preview. */
import { describe, expect, it } from 'vitest';
import { FADE_GRADE_THRESHOLDS, gradeFade, gradeYellowing } from '../../../src/lib/restoration/analysis.ts';
import { identityCorrection } from '../../../src/lib/restoration/correction.ts';
import { dyeGain, renderPreview, samplePatch, sameCorrection, withDyeGain, withStrength, withWhitePoint } from '../../../src/lib/review/adjust.ts';
import { FADE_GRADES, SHORTCUTS } from '../../../src/lib/review/words.ts';
import { decisionInput } from '../../../src/lib/review/schemas.ts';

describe('review words', () => {
  it('lists every grade the engine can give', () => {
    const seen = new Set([gradeFade(0), gradeFade(0.1), gradeFade(0.2), gradeFade(0.5)]);
    expect([...seen].sort()).toEqual([...FADE_GRADES].sort());
    const yellowing = new Set([gradeYellowing(0), gradeYellowing(0.05), gradeYellowing(0.12), gradeYellowing(0.3)]);
    expect([...yellowing].sort()).toEqual([...FADE_GRADES].sort());
    expect(FADE_GRADE_THRESHOLDS.slight.dyeLoss).toBe(0.15);
  });

  it('gives every shortcut its own key', () => {
    const keys = SHORTCUTS.map((s) => s.key);
    expect(new Set(keys).size).toBe(keys.length);
  });
});

describe('adjustments', () => {
  it('keeps strength within 0..1 and dye gains within what the engine accepts', () => {
    const c = identityCorrection();
    expect(withStrength(c, 1.7).strength).toBe(1);
    expect(withStrength(c, -1).strength).toBe(0);
    expect(dyeGain(withDyeGain(c, 'cyan', 9), 'cyan')).toBe(4);
    expect(withDyeGain(c, 'magenta', 1.3).curves.green.densityGain).toBe(1.3);
    expect(sameCorrection(c, withStrength(c, 1))).toBe(true);
    expect(sameCorrection(c, withDyeGain(c, 'yellow', 1.1))).toBe(false);
  });

  it('takes the white point as the mean of a small patch, not a single noisy pixel', () => {
    // a 5x5 patch of (200, 180, 150) with one dust speck of (0, 0, 0) in the middle; invented for the test
    const w = 5;
    const px = new Uint8ClampedArray(w * w * 4);
    for (let i = 0; i < w * w; i++) px.set([200, 180, 150, 255], i * 4);
    px.set([0, 0, 0, 255], 12 * 4);
    const got = samplePatch(px, w, w, 2, 2, 2);
    expect(got[0] * 255).toBeCloseTo((200 * 24) / 25, 6);
    expect(withWhitePoint(identityCorrection(), got).whitePoint[2]).toBeCloseTo((150 * 24) / 25 / 255, 4);
  });

  it('renders the identity correction as the original, alpha kept', () => {
    const px = new Uint8ClampedArray(256 * 4);
    for (let i = 0; i < 256; i++) px.set([i, 255 - i, (i * 7) % 256, 128], i * 4);
    expect([...renderPreview(px, identityCorrection())]).toEqual([...px]);
  });

  it('refuses negative details on anything but a rescan', () => {
    expect(decisionInput.safeParse({ decision: 'skipped', lockVersion: 0, negativeLocation: 'box' }).success).toBe(false);
    expect(decisionInput.safeParse({ decision: 'rescan', lockVersion: 0, negativeLocation: 'box' }).success).toBe(true);
  });
});
