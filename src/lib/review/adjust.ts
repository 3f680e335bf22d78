/**
 * The operator's adjustments as edits of an engine Correction, and the live preview. The preview
 * renders with the engine's own tables (buildChannelLuts + applyCorrection): the browser and the
 * server share one implementation, so what the operator sees is what the render job writes.
 */
import { applyCorrection, applyGeometry, buildChannelLuts, correctionSchema, geometryPlan, hasGeometry, monotoneCurve, type ChannelLuts, type ChannelName, type Correction, type Geometry, type GeometryPlan } from '../restoration/correction.ts';
import type { Triplet } from '../restoration/colour.ts';
import { DYE_LAYERS, type DyeName } from './words.ts';

/** Density gain range the dye controls offer (the engine accepts 0.25..4; past 3 it only amplifies noise). */
export const GAIN_RANGE = { min: 0.5, max: 3, step: 0.01 } as const;

const channelOf = (dye: DyeName) => DYE_LAYERS.find((d) => d.dye === dye)!.channel;

/** A copy of `c` with a new strength (0..1). */
export function withStrength(c: Correction, strength: number): Correction {
  return { ...c, strength: round(clamp(strength, 0, 1), 3) };
}

/** A copy of `c` with one dye layer's density gain changed. */
export function withDyeGain(c: Correction, dye: DyeName, gain: number): Correction {
  const ch = channelOf(dye);
  return { ...c, curves: { ...c.curves, [ch]: { densityGain: round(clamp(gain, 0.25, 4), 4) } } };
}

/** A copy of `c` whose white point is the given encoded sRGB colour (0..1), e.g. a patch of paper base. */
export function withWhitePoint(c: Correction, srgb: Triplet): Correction {
  return { ...c, whitePoint: srgb.map((v) => round(clamp(v, 0.02, 1), 5)) as Triplet };
}

/** Overall contrast range the control offers (the engine accepts 0.5..2). */
export const CONTRAST_RANGE = { min: 0.5, max: 2, step: 0.01 } as const;
/** Black point range the control offers, in encoded sRGB: past 0.3 it only crushes shadows. */
export const BLACK_RANGE = { min: 0, max: 0.3, step: 0.005 } as const;
/** Inputs of the points the curve controls move (0 and 1 stay where they are). */
export const CURVE_INPUTS = [0.25, 0.5, 0.75] as const;

/** The overall contrast of `c` (1 when it has none). */
export function contrastOf(c: Correction): number {
  return c.contrast ?? 1;
}

/** A copy of `c` with a new overall contrast; 1 leaves the field out, as corrections without it are stored. */
export function withContrast(c: Correction, contrast: number): Correction {
  const v = round(clamp(contrast, CONTRAST_RANGE.min, CONTRAST_RANGE.max), 3);
  const { contrast: _old, ...rest } = c;
  return v === 1 ? rest : { ...rest, contrast: v };
}

/** The black point's level: its darkest-set channel's value (0 when there is none). */
export function blackLevel(c: Correction): number {
  return c.blackPoint ? Math.max(...c.blackPoint) : 0;
}

/**
 * A copy of `c` whose black point has the given level. A black point with a tint (picked or
 * proposed) moves as a whole, keeping its tint; 0 leaves the field out.
 */
export function withBlackLevel(c: Correction, level: number): Correction {
  const v = round(clamp(level, BLACK_RANGE.min, BLACK_RANGE.max), 4);
  const { blackPoint, ...rest } = c;
  const shift = v - blackLevel(c);
  const next = (blackPoint ?? [0, 0, 0]).map((x) => round(clamp((blackPoint ? x : 0) + (blackPoint ? shift : v), 0, 1), 4)) as Triplet;
  return next.every((x) => x === 0) ? rest : { ...rest, blackPoint: next };
}

/** The output of one channel's tone curve at `x` (x itself when the channel has none). */
export function curveAt(c: Correction, ch: ChannelName, x: number): number {
  const pts = c.toneCurves?.[ch];
  return pts ? monotoneCurve(pts)(x) : x;
}

/**
 * A copy of `c` with one point of one channel's curve moved to `y` (the curve is re-read at
 * 0, CURVE_INPUTS and 1 first). The point stays between its neighbours, so the curve never goes
 * down; a curve back on the diagonal is left out.
 */
export function withCurvePoint(c: Correction, ch: ChannelName, x: number, y: number): Correction {
  const xs = [0, ...CURVE_INPUTS, 1];
  const pts = xs.map((px) => [px, round(curveAt(c, ch, px), 4)] as [number, number]);
  const k = xs.findIndex((px) => Math.abs(px - x) < 1e-9);
  if (k < 0) return c;
  pts[k][1] = round(clamp(y, k > 0 ? pts[k - 1][1] : 0, k < pts.length - 1 ? pts[k + 1][1] : 1), 4);
  const { toneCurves, ...rest } = c;
  const curves: NonNullable<Correction['toneCurves']> = { ...(toneCurves ?? {}) };
  if (pts.every(([px, py]) => px === py)) delete curves[ch];
  else curves[ch] = pts;
  return Object.keys(curves).length === 0 ? rest : { ...rest, toneCurves: curves };
}

/** A copy of `c` with one channel's curve (or every channel's, without `ch`) straight again. */
export function withStraightCurve(c: Correction, ch?: ChannelName): Correction {
  const { toneCurves, ...rest } = c;
  if (!ch || !toneCurves) return rest;
  const { [ch]: _gone, ...others } = toneCurves;
  return Object.keys(others).length === 0 ? rest : { ...rest, toneCurves: others };
}

function withGeometryOf(c: Correction, g: Geometry): Correction {
  const { geometry: _old, ...rest } = c;
  const cleaned: Geometry = g.crop && (g.crop.x > 0 || g.crop.y > 0 || g.crop.width < 1 || g.crop.height < 1) ? g : { quarterTurns: g.quarterTurns };
  return cleaned.quarterTurns === 0 && !cleaned.crop ? rest : { ...rest, geometry: cleaned };
}

/** Clockwise quarter turns of `c` (0..3). */
export function quarterTurnsOf(c: Correction): number {
  return c.geometry?.quarterTurns ?? 0;
}

/**
 * A copy of `c` turned by `delta` quarter turns (1 clockwise, -1 anticlockwise). A crop turns
 * with the print, so the same part of the print stays kept.
 */
export function withTurn(c: Correction, delta: 1 | -1): Correction {
  const q = (((quarterTurnsOf(c) + delta) % 4) + 4) % 4;
  const r = c.geometry?.crop;
  const crop = r
    ? delta === 1
      ? { x: round(1 - (r.y + r.height), 4), y: r.x, width: r.height, height: r.width }
      : { x: r.y, y: round(1 - (r.x + r.width), 4), width: r.height, height: r.width }
    : undefined;
  return withGeometryOf(c, crop ? { quarterTurns: q, crop } : { quarterTurns: q });
}

/** What the crop of `c` trims from each edge of the turned print, as fractions. */
export interface Trim {
  left: number;
  top: number;
  right: number;
  bottom: number;
}

/** The trim of each edge of the turned print (all 0 without a crop). */
export function trimOf(c: Correction): Trim {
  const r = c.geometry?.crop;
  if (!r) return { left: 0, top: 0, right: 0, bottom: 0 };
  return { left: r.x, top: r.y, right: round(1 - r.x - r.width, 4), bottom: round(1 - r.y - r.height, 4) };
}

/** Most of one dimension a crop may trim away: at least a tenth of the print stays. */
export const MAX_TRIM = 0.9;

/** A copy of `c` with one edge's trim changed (fraction of the turned print), kept so at least a tenth remains. */
export function withTrim(c: Correction, edge: keyof Trim, fraction: number): Correction {
  const t = { ...trimOf(c) };
  const opposite = { left: 'right', right: 'left', top: 'bottom', bottom: 'top' } as const;
  t[edge] = round(clamp(fraction, 0, MAX_TRIM - t[opposite[edge]]), 4);
  const crop = { x: t.left, y: t.top, width: round(1 - t.left - t.right, 4), height: round(1 - t.top - t.bottom, 4) };
  return withGeometryOf(c, { quarterTurns: quarterTurnsOf(c) as Geometry['quarterTurns'], crop });
}

/** A copy of `c` with its turns and crop taken away. */
export function withoutGeometry(c: Correction): Correction {
  const { geometry: _old, ...rest } = c;
  return rest;
}

/** The density gain of one dye layer. */
export function dyeGain(c: Correction, dye: DyeName): number {
  return c.curves[channelOf(dye)].densityGain;
}

/** True when two corrections render the same. */
export function sameCorrection(a: Correction | null | undefined, b: Correction | null | undefined): boolean {
  if (!a || !b) return a === b;
  return JSON.stringify(correctionSchema.parse(a)) === JSON.stringify(correctionSchema.parse(b));
}

/**
 * Mean colour of a square patch around (x, y) of interleaved RGBA pixels, as encoded sRGB 0..1.
 * A patch rather than one pixel keeps scan grain and JPEG noise out of the white point.
 */
export function samplePatch(rgba: Uint8ClampedArray | Uint8Array, width: number, height: number, x: number, y: number, radius = 3): Triplet {
  const cx = Math.round(clamp(x, 0, width - 1));
  const cy = Math.round(clamp(y, 0, height - 1));
  const sum = [0, 0, 0];
  let n = 0;
  for (let yy = Math.max(0, cy - radius); yy <= Math.min(height - 1, cy + radius); yy++) {
    for (let xx = Math.max(0, cx - radius); xx <= Math.min(width - 1, cx + radius); xx++) {
      const i = (yy * width + xx) * 4;
      sum[0] += rgba[i];
      sum[1] += rgba[i + 1];
      sum[2] += rgba[i + 2];
      n++;
    }
  }
  return sum.map((s) => s / n / 255) as Triplet;
}

let cached: { key: string; luts: ChannelLuts } | null = null;

/** The engine's 8-bit tables for `c`, kept for the last correction so redrawing a split costs nothing. */
export function previewLuts(c: Correction): ChannelLuts {
  const key = JSON.stringify(c);
  if (cached?.key !== key) cached = { key, luts: buildChannelLuts(c, 8, 8) };
  return cached.luts;
}

/**
 * Renders the corrected preview: `source` RGBA pixels of the original (as decoded by the browser)
 * into `dest`, with the engine's per-pixel code. Alpha passes through.
 */
export function renderPreview(source: Uint8ClampedArray | Uint8Array, c: Correction, dest?: Uint8ClampedArray): Uint8ClampedArray {
  const out = dest ?? new Uint8ClampedArray(source.length);
  applyCorrection(source, 4, previewLuts(c), out);
  return out;
}

/** Interleaved RGBA pixels turned and cropped as the render will be; the same pixels when `c` has no geometry. */
export function previewGeometry(pixels: Uint8ClampedArray, width: number, height: number, c: Correction): { data: Uint8ClampedArray; width: number; height: number; plan: GeometryPlan | null } {
  if (!hasGeometry(c)) return { data: pixels, width, height, plan: null };
  const plan = geometryPlan(c, width, height);
  return { ...applyGeometry(pixels, width, height, 4, plan), plan };
}

/**
 * The rectangle of the upright scan (x, y, w, h, in its pixels) that turns into the rectangle
 * [x0, x1) x [y0, y1) of the turned scan; turned by the plan's quarter turns it is that rectangle.
 */
export function uprightRect(plan: Pick<GeometryPlan, 'quarterTurns' | 'turnedWidth' | 'turnedHeight'>, x0: number, y0: number, x1: number, y1: number): { x: number; y: number; w: number; h: number } {
  const W = plan.quarterTurns % 2 === 1 ? plan.turnedHeight : plan.turnedWidth;
  const H = plan.quarterTurns % 2 === 1 ? plan.turnedWidth : plan.turnedHeight;
  switch (plan.quarterTurns) {
    case 1: return { x: y0, y: H - x1, w: y1 - y0, h: x1 - x0 };
    case 2: return { x: W - x1, y: H - y1, w: x1 - x0, h: y1 - y0 };
    case 3: return { x: W - y1, y: x0, w: y1 - y0, h: x1 - x0 };
    default: return { x: x0, y: y0, w: x1 - x0, h: y1 - y0 };
  }
}

function clamp(x: number, lo: number, hi: number): number {
  return x < lo ? lo : x > hi ? hi : x;
}

function round(x: number, digits: number): number {
  const f = Math.pow(10, digits);
  return Math.round(x * f) / f;
}
