/**
 * The operator's adjustments as edits of an engine Correction, and the live preview. The preview
 * renders with the engine's own tables (buildChannelLuts + applyCorrection): the browser and the
 * server share one implementation, so what the operator sees is what the render job writes.
 */
import { applyCorrection, buildChannelLuts, correctionSchema, type ChannelLuts, type Correction } from '../restoration/correction.ts';
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

function clamp(x: number, lo: number, hi: number): number {
  return x < lo ? lo : x > hi ? hi : x;
}

function round(x: number, digits: number): number {
  const f = Math.pow(10, digits);
  return Math.round(x * f) / f;
}
