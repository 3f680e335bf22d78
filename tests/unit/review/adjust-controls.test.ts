/**
 * The adjust panel's edits of a correction (src/lib/review/adjust.ts): black point, contrast,
 * curve points, turns and trims, and the mapping of the framed print back to the upright scan
 * that the 1:1 view fetches by. Values invented for the tests.
 */
import { describe, expect, it } from 'vitest';
import { applyGeometry, correctionSchema, geometryPlan, identityCorrection, type Correction } from '../../../src/lib/restoration/correction';
import {
  blackLevel,
  curveAt,
  trimOf,
  uprightRect,
  withBlackLevel,
  withContrast,
  withCurvePoint,
  withStraightCurve,
  withTrim,
  withTurn,
} from '../../../src/lib/review/adjust';

const W = 40;
const H = 20;
const scan = new Uint8Array(W * H);
for (let i = 0; i < scan.length; i++) scan[i] = i % 251;

describe('tone edits', () => {
  it('leave the fields out at their neutral values, so an untouched correction stays as stored', () => {
    const c = identityCorrection();
    expect(withContrast(withContrast(c, 1.3), 1)).toEqual(c);
    expect(withBlackLevel(withBlackLevel(c, 0.1), 0)).toEqual(c);
    expect(withCurvePoint(withCurvePoint(c, 'red', 0.5, 0.6), 'red', 0.5, 0.5)).toEqual(c);
    expect(withStraightCurve(withCurvePoint(c, 'blue', 0.25, 0.3), 'blue')).toEqual(c);
  });

  it('move a tinted black point as a whole, keeping its tint', () => {
    const c: Correction = { ...identityCorrection(), blackPoint: [0.04, 0.06, 0.1] };
    const moved = withBlackLevel(c, 0.15);
    expect(blackLevel(moved)).toBeCloseTo(0.15, 6);
    expect(moved.blackPoint![2] - moved.blackPoint![0]).toBeCloseTo(0.06, 6);
  });

  it('keep a moved curve point between its neighbours, so the curve never goes down', () => {
    let c = withCurvePoint(identityCorrection(), 'green', 0.75, 0.6);
    c = withCurvePoint(c, 'green', 0.5, 0.9);
    expect(curveAt(c, 'green', 0.5)).toBeCloseTo(0.6, 6);
    expect(correctionSchema.safeParse(c).success).toBe(true);
    expect(c.toneCurves!.red).toBeUndefined();
  });
});

describe('turns and trims', () => {
  it('turn a crop with the print, so the same part of the print stays kept', () => {
    const cropped = withTrim(withTrim(identityCorrection(), 'left', 0.25), 'top', 0.5);
    const framed = (c: Correction) => applyGeometry(scan, W, H, 1, geometryPlan(c, W, H));
    const once = framed(cropped);
    const turned = framed(withTurn(cropped, 1));
    // turning the framed result by itself a quarter clockwise gives the same pixels
    const byItself = applyGeometry(once.data, once.width, once.height, 1, geometryPlan({ geometry: { quarterTurns: 1 } }, once.width, once.height));
    expect([turned.width, turned.height]).toEqual([byItself.width, byItself.height]);
    expect(Buffer.from(turned.data).equals(Buffer.from(byItself.data))).toBe(true);
    // and four turns come back to where they began
    expect(withTurn(withTurn(withTurn(withTurn(cropped, 1), 1), -1), -1)).toEqual(cropped);
  });

  it('keep at least a tenth of the print whatever is typed', () => {
    const c = withTrim(withTrim(identityCorrection(), 'left', 0.6), 'right', 0.8);
    const t = trimOf(c);
    expect(1 - t.left - t.right).toBeGreaterThanOrEqual(0.1 - 1e-9);
    expect(correctionSchema.safeParse(c).success).toBe(true);
  });

  it('find the upright rectangle behind a rectangle of the turned scan, for every turn', () => {
    for (const quarterTurns of [0, 1, 2, 3] as const) {
      const plan = geometryPlan({ geometry: { quarterTurns } }, W, H);
      const [x0, y0, x1, y1] = [3, 2, plan.turnedWidth - 5, plan.turnedHeight - 1];
      const r = uprightRect(plan, x0, y0, x1, y1);
      // the upright rectangle, cut out and turned, is the turned scan's rectangle
      const cut = applyGeometry(scan, W, H, 1, { quarterTurns: 0, turnedWidth: W, turnedHeight: H, left: r.x, top: r.y, width: r.w, height: r.h });
      const turnedCut = applyGeometry(cut.data, cut.width, cut.height, 1, geometryPlan({ geometry: { quarterTurns } }, cut.width, cut.height));
      const direct = applyGeometry(scan, W, H, 1, { ...plan, left: x0, top: y0, width: x1 - x0, height: y1 - y0 });
      expect(Buffer.from(turnedCut.data).equals(Buffer.from(direct.data)), `turns ${quarterTurns}`).toBe(true);
    }
  });
});
