/**
 * The correction: what the engine proposes for one print and an operator may later change.
 * Rendering is a pure function of (original pixels, correction), so every result can be re-made.
 *
 * Model (a first approximation; McCormick-Goodhart & Wilhelm 2003 on dark and light fading of chromogenic dyes): ageing acts on density per channel, D' = k·D + s. Undoing it is
 *   D = (D' - s) / k
 * which in linear light is a division by the paper base (the white point, 10^-s) followed by a
 * power of 1/k. Because it is separable per channel, a 256- or 65536-entry table per channel
 * renders a full-resolution scan cheaply, on the server and in the browser alike.
 */
import { z } from 'zod';
import { srgbDecode, srgbEncode, type Triplet } from './colour';

/** Current version of the correction format; bump on any change of meaning. */
export const CORRECTION_VERSION = 1 as const;

const unit = z.number().finite().min(0).max(1);
const triplet = z.tuple([unit, unit, unit]);

/** Density gain 1/k: how much the surviving dye density is multiplied by to restore it. */
const channelCurve = z
  .object({
    /** Multiplier on density above the paper base (1 = unchanged, 1.25 restores a dye left at 80 %). */
    densityGain: z.number().finite().min(0.25).max(4),
  })
  .strict();

/**
 * A tone curve of one channel: a few points (input, output) in encoded sRGB 0..1, inputs
 * increasing and outputs never decreasing, joined by monotone cubic interpolation (Fritsch &
 * Carlson 1980) so that no tone is ever inverted. Outside its first and last point it holds
 * their outputs.
 */
const toneCurve = z
  .array(z.tuple([unit, unit]))
  .min(2)
  .max(8)
  .superRefine((pts, ctx) => {
    for (let i = 1; i < pts.length; i++) {
      if (!(pts[i][0] > pts[i - 1][0])) ctx.addIssue({ code: 'custom', path: [i, 0], message: 'The inputs of a curve\'s points must increase.' });
      if (pts[i][1] < pts[i - 1][1]) ctx.addIssue({ code: 'custom', path: [i, 1], message: 'A curve may not go down: that would invert tones.' });
    }
  });

/** A kept rectangle, in fractions (0..1) of the turned scan's width and height. */
const cropSchema = z
  .object({ x: unit, y: unit, width: z.number().finite().min(0.02).max(1), height: z.number().finite().min(0.02).max(1) })
  .strict()
  .refine((r) => r.x + r.width <= 1 + 1e-9 && r.y + r.height <= 1 + 1e-9, { message: 'The crop must stay inside the scan.' });

/** Quarter turns and crop of the render; the original file is never changed. */
const geometrySchema = z
  .object({
    /** Clockwise quarter turns, 0..3, applied first. */
    quarterTurns: z.number().int().min(0).max(3),
    /** What is kept of the turned scan; absent = all of it. */
    crop: cropSchema.optional(),
  })
  .strict();

/** zod schema of {@link Correction}; the web API validates operator edits with it. */
export const correctionSchema = z
  .object({
    version: z.literal(CORRECTION_VERSION),
    /** Encoded sRGB (0..1) of the paper base or stain as scanned. */
    whitePoint: triplet,
    curves: z.object({ red: channelCurve, green: channelCurve, blue: channelCurve }).strict(),
    /** Encoded sRGB (0..1) of the scan's floor (flare), mapped to black; absent = none. */
    blackPoint: triplet.optional(),
    /**
     * Linear reflectance (0..1) the white point is brought to in every channel. Absent: the white
     * point's brightest channel, so that removing a stain never brightens the print (the meaning of
     * every correction made before this field existed, which is why the version did not change).
     */
    whiteTarget: z.number().finite().min(0.05).max(1).optional(),
    /** 0 = leave the scan as it is, 1 = full correction; parameters blend toward identity. */
    strength: unit,
    /**
     * Overall contrast: one more multiplier on the density above the paper base, for all three
     * dyes together (1 = unchanged; absent = 1, the meaning of every correction made before).
     */
    contrast: z.number().finite().min(0.5).max(2).optional(),
    /** Tone curves per channel, applied after the density correction; an absent channel is straight. */
    toneCurves: z.object({ red: toneCurve.optional(), green: toneCurve.optional(), blue: toneCurve.optional() }).strict().optional(),
    /** Quarter turns and crop of the render (not blended by strength); absent = the scan as it lies. */
    geometry: geometrySchema.optional(),
  })
  .strict();

/** A versioned, JSON-serialisable correction for one print. */
export type Correction = z.infer<typeof correctionSchema>;

export type ChannelName = 'red' | 'green' | 'blue';
export const CHANNELS: readonly ChannelName[] = ['red', 'green', 'blue'];

/** The correction that changes nothing. */
export function identityCorrection(): Correction {
  return {
    version: CORRECTION_VERSION,
    whitePoint: [1, 1, 1],
    curves: { red: { densityGain: 1 }, green: { densityGain: 1 }, blue: { densityGain: 1 } },
    strength: 1,
  };
}

/** The quarter turns and crop of a correction. */
export type Geometry = z.infer<typeof geometrySchema>;
/** A tone curve's points, (input, output) in encoded sRGB 0..1. */
export type ToneCurvePoints = [number, number][];

/** True when a tone curve maps every value to itself (absent, or every point on the diagonal). */
function straightCurve(points: readonly (readonly [number, number])[] | undefined): boolean {
  if (!points) return true;
  return points.length >= 2 && points[0][0] === 0 && points.at(-1)![0] === 1 && points.every(([x, y]) => x === y);
}

/**
 * True when the colour tables of `c` would leave every value as it is. Turns and crop are apart
 * from this ({@link hasGeometry}): strength never blends them.
 */
export function isIdentity(c: Correction): boolean {
  if (c.strength === 0) return true;
  if (c.contrast !== undefined && c.contrast !== 1) return false;
  if (c.toneCurves && !CHANNELS.every((ch) => straightCurve(c.toneCurves![ch]))) return false;
  const w = c.whitePoint;
  const neutralWhite = w[0] === w[1] && w[1] === w[2];
  const flatCurves = CHANNELS.every((ch) => c.curves[ch].densityGain === 1);
  const noBlack = !c.blackPoint || c.blackPoint.every((v) => v === 0);
  const sameWhite = c.whiteTarget === undefined || Math.abs(c.whiteTarget - srgbDecode(w[0])) < 1e-9;
  return neutralWhite && flatCurves && noBlack && sameWhite;
}

/**
 * Whether two corrections render alike: the same fields, and every number within `tolerance`
 * (compared as values, whatever the order of the keys in the stored JSON).
 */
export function sameCorrection(a: unknown, b: unknown, tolerance = 1e-3): boolean {
  if (typeof a === 'number' && typeof b === 'number') return Math.abs(a - b) <= tolerance;
  if (Array.isArray(a) && Array.isArray(b)) return a.length === b.length && a.every((x, i) => sameCorrection(x, b[i], tolerance));
  if (a && b && typeof a === 'object' && typeof b === 'object') {
    const ka = Object.keys(a).filter((k) => (a as Record<string, unknown>)[k] !== undefined);
    const kb = Object.keys(b).filter((k) => (b as Record<string, unknown>)[k] !== undefined);
    return ka.length === kb.length && ka.every((k) => sameCorrection((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], tolerance));
  }
  return a === b;
}

/** True when the render is turned or cropped. */
export function hasGeometry(c: Correction): boolean {
  const g = c.geometry;
  if (!g) return false;
  const r = g.crop;
  return g.quarterTurns !== 0 || (!!r && (r.x > 0 || r.y > 0 || r.width < 1 || r.height < 1));
}

/**
 * A function through the points of a tone curve by monotone piecewise cubic Hermite
 * interpolation (F. N. Fritsch & R. E. Carlson, "Monotone piecewise cubic interpolation",
 * SIAM J. Numer. Anal. 17(2), 1980): secant slopes, averaged tangents, zero tangents at flat
 * stretches, and tangents scaled back inside the circle of radius 3 so that monotone points give
 * a monotone curve. Outside the first and last point it holds their outputs.
 */
export function monotoneCurve(points: readonly (readonly [number, number])[]): (x: number) => number {
  const n = points.length;
  const xs = points.map((p) => p[0]);
  const ys = points.map((p) => p[1]);
  if (n === 1) return () => ys[0];
  const h: number[] = [];
  const d: number[] = [];
  for (let k = 0; k < n - 1; k++) {
    h.push(xs[k + 1] - xs[k]);
    d.push((ys[k + 1] - ys[k]) / h[k]);
  }
  const m: number[] = new Array(n);
  m[0] = d[0];
  m[n - 1] = d[n - 2];
  for (let k = 1; k < n - 1; k++) m[k] = d[k - 1] * d[k] <= 0 ? 0 : (d[k - 1] + d[k]) / 2;
  for (let k = 0; k < n - 1; k++) {
    if (d[k] === 0) {
      m[k] = 0;
      m[k + 1] = 0;
      continue;
    }
    const a = m[k] / d[k];
    const b = m[k + 1] / d[k];
    const r = a * a + b * b;
    if (r > 9) {
      const tau = 3 / Math.sqrt(r);
      m[k] = tau * a * d[k];
      m[k + 1] = tau * b * d[k];
    }
  }
  return (x: number) => {
    if (x <= xs[0]) return ys[0];
    if (x >= xs[n - 1]) return ys[n - 1];
    let k = 0;
    while (k < n - 2 && x > xs[k + 1]) k++;
    const t = (x - xs[k]) / h[k];
    const t2 = t * t;
    const t3 = t2 * t;
    return (2 * t3 - 3 * t2 + 1) * ys[k] + (t3 - 2 * t2 + t) * h[k] * m[k] + (-2 * t3 + 3 * t2) * ys[k + 1] + (t3 - t2) * h[k] * m[k + 1];
  };
}

/** The per-channel parameters a correction resolves to after strength is applied. */
export interface EffectiveChannel {
  /** Linear reflectance of the paper base in this channel, raised to the strength. */
  divisor: number;
  /** Power applied in linear light (= density gain). */
  gain: number;
  /** Linear reflectance the paper base is mapped back to (whiteTarget, else its brightest channel), raised to the strength. */
  paper: number;
  /** Linear floor removed before the white point. */
  floor: number;
}

/**
 * Resolves strength and white point into per-channel parameters. In density terms, at full
 * strength: D = gain·(D' - D'paper) + Dpaper,min. Density above the paper base is restored per
 * channel, and the paper base itself comes out neutral at the lightness of its brightest channel:
 * the stain is removed without brightening the print, and a print on clean paper keeps its tone.
 */
export function effectiveChannels(c: Correction): Record<ChannelName, EffectiveChannel> {
  const t = c.strength;
  const lin = c.whitePoint.map((v) => Math.max(srgbDecode(v), 1e-4)) as Triplet;
  const top = c.whiteTarget ?? Math.max(...lin);
  const out = {} as Record<ChannelName, EffectiveChannel>;
  // overall contrast multiplies every dye's density gain alike; absent or 1 leaves the gains exactly as before
  const contrast = c.contrast !== undefined && c.contrast !== 1 ? 1 + t * (c.contrast - 1) : 1;
  CHANNELS.forEach((ch, i) => {
    const floor = c.blackPoint ? srgbDecode(c.blackPoint[i]) * t : 0;
    const gain = 1 + t * (c.curves[ch].densityGain - 1);
    out[ch] = {
      divisor: Math.pow(lin[i], t),
      gain: contrast === 1 ? gain : gain * contrast,
      paper: Math.pow(top, t),
      floor: Math.min(floor, 0.5),
    };
  });
  return out;
}

/** One lookup table per channel, from input code value to output code value. */
export interface ChannelLuts {
  inDepth: 8 | 16;
  outDepth: 8 | 16;
  red: Uint8Array | Uint16Array;
  green: Uint8Array | Uint16Array;
  blue: Uint8Array | Uint16Array;
}

/** Corrects one linear-light value of one channel. */
export function correctLinear(x: number, p: EffectiveChannel): number {
  let v = p.floor > 0 ? (x - p.floor) / (1 - p.floor) : x;
  if (v <= 0) return 0;
  v = Math.pow(v / p.divisor, p.gain) * p.paper;
  return v >= 1 ? 1 : v;
}

/**
 * Builds the per-channel tables for a correction.
 * @param depth bits per channel of the pixels the tables will be applied to
 * @param outDepth bits per channel wanted out (a 16-bit scan may render straight to 8-bit)
 */
export function buildChannelLuts(c: Correction, depth: 8 | 16, outDepth: 8 | 16 = depth): ChannelLuts {
  const params = effectiveChannels(c);
  const inMax = depth === 8 ? 255 : 65535;
  const outMax = outDepth === 8 ? 255 : 65535;
  const t = c.strength;
  const make = (ch: ChannelName) => {
    const p = params[ch];
    const points = c.toneCurves?.[ch];
    // the tone curve acts on the corrected, encoded value and blends toward straight with strength
    const curve = points && !straightCurve(points) && t > 0 ? monotoneCurve(points) : undefined;
    const lut = outDepth === 8 ? new Uint8Array(inMax + 1) : new Uint16Array(inMax + 1);
    for (let i = 0; i <= inMax; i++) {
      let y = srgbEncode(correctLinear(srgbDecode(i / inMax), p));
      if (curve) y += t * (curve(Math.min(Math.max(y, 0), 1)) - y);
      lut[i] = Math.round(Math.min(Math.max(y, 0), 1) * outMax);
    }
    return lut;
  };
  return { inDepth: depth, outDepth, red: make('red'), green: make('green'), blue: make('blue') };
}

/** Thrown when pixels and tables do not fit together. */
export class CorrectionInputError extends Error {
  readonly code = 'invalid_pixels';
  constructor(message: string) {
    super(message);
    this.name = 'CorrectionInputError';
  }
}

/** Whether 32-bit words hold their bytes lowest first (every browser and server CPU in use does). */
export const LITTLE_ENDIAN = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;

/** Below this many bytes the pair tables cost more to build than they save. */
const PAIR_TABLES_FROM = 1 << 20;

/** Tables from two neighbouring bytes to their two corrected bytes, per channel pair, per set of tables (tables are never changed once built). */
const pairTables = new WeakMap<ChannelLuts, { rg: Uint16Array; br: Uint16Array; gb: Uint16Array }>();

function pairTable(lo: Uint8Array, hi: Uint8Array): Uint16Array {
  const t = new Uint16Array(65536);
  for (let h = 0; h < 256; h++) {
    const high = hi[h] << 8;
    const base = h << 8;
    for (let l = 0; l < 256; l++) t[base | l] = high | lo[l];
  }
  return t;
}

// One monomorphic loop per array type: V8 keeps each fast, where a shared loop over mixed
// array types runs at about half speed.
function map8(src: Uint8Array, dst: Uint8Array, luts: ChannelLuts, r: Uint8Array, g: Uint8Array, b: Uint8Array): void {
  const n = src.length;
  let i = 0;
  if (LITTLE_ENDIAN && n >= PAIR_TABLES_FROM && src.byteOffset % 4 === 0 && dst.byteOffset % 4 === 0) {
    // Four RGB pixels are three 32-bit words, and each half-word is two neighbouring channels
    // (red-green, blue-red, green-blue in turn): two lookups in a 65536-entry table per word
    // instead of four byte lookups, with one load and one store per four bytes. About a third
    // of the time of the byte loop on a full-resolution scan; the tables (384 KB) stay in cache.
    let t = pairTables.get(luts);
    if (!t) {
      t = { rg: pairTable(r, g), br: pairTable(b, r), gb: pairTable(g, b) };
      pairTables.set(luts, t);
    }
    const words = Math.floor(n / 12) * 3;
    mapWords(new Uint32Array(src.buffer, src.byteOffset, words), new Uint32Array(dst.buffer, dst.byteOffset, words), t.rg, t.br, t.gb);
    i = words * 4;
  }
  // what is left over (and small buffers): byte by byte, in a loop of its own so that each
  // loop is optimised by V8 as it runs, without code of the other that has not run yet
  if (i < n) mapBytes(src, dst, i, r, g, b);
}

function mapWords(s: Uint32Array, d: Uint32Array, rg: Uint16Array, br: Uint16Array, gb: Uint16Array): void {
  const words = s.length;
  for (let w = 0; w < words; w += 3) {
    const a = s[w];
    const c = s[w + 1];
    const e = s[w + 2];
    d[w] = rg[a & 0xffff] | (br[a >>> 16] << 16);
    d[w + 1] = gb[c & 0xffff] | (rg[c >>> 16] << 16);
    d[w + 2] = br[e & 0xffff] | (gb[e >>> 16] << 16);
  }
}

function mapBytes(src: Uint8Array, dst: Uint8Array, from: number, r: Uint8Array, g: Uint8Array, b: Uint8Array): void {
  const n = src.length;
  for (let i = from; i < n; i += 3) {
    dst[i] = r[src[i]];
    dst[i + 1] = g[src[i + 1]];
    dst[i + 2] = b[src[i + 2]];
  }
}

function map16(src: Uint16Array, dst: Uint8Array, r: Uint8Array, g: Uint8Array, b: Uint8Array): void {
  for (let i = 0; i < src.length; i += 3) {
    dst[i] = r[src[i]];
    dst[i + 1] = g[src[i + 1]];
    dst[i + 2] = b[src[i + 2]];
  }
}

function mapAny(data: ArrayLike<number>, channels: number, luts: ChannelLuts, dest: Uint8Array | Uint8ClampedArray | Uint16Array): void {
  const { red, green, blue } = luts;
  const n = data.length;
  if (channels === 3) {
    for (let i = 0; i < n; i += 3) {
      dest[i] = red[data[i]];
      dest[i + 1] = green[data[i + 1]];
      dest[i + 2] = blue[data[i + 2]];
    }
    return;
  }
  const alphaShift = luts.inDepth === luts.outDepth ? 0 : luts.inDepth === 16 ? 8 : -8;
  for (let i = 0; i < n; i += 4) {
    dest[i] = red[data[i]];
    dest[i + 1] = green[data[i + 1]];
    dest[i + 2] = blue[data[i + 2]];
    const a = data[i + 3];
    dest[i + 3] = alphaShift > 0 ? a >> 8 : alphaShift < 0 ? a * 257 : a;
  }
}

/**
 * Applies the tables to interleaved RGB or RGBA pixels (alpha passes through).
 * @param out destination; pass `data` itself to correct in place. Allocated when omitted.
 */
export function applyCorrection<T extends Uint8Array | Uint8ClampedArray | Uint16Array>(
  data: T,
  channels: number,
  luts: ChannelLuts,
  out?: Uint8Array | Uint8ClampedArray | Uint16Array,
): Uint8Array | Uint8ClampedArray | Uint16Array {
  if (channels !== 3 && channels !== 4) {
    throw new CorrectionInputError(`expected 3 or 4 interleaved channels, got ${channels}`);
  }
  if (data.length % channels !== 0) throw new CorrectionInputError('pixel buffer length is not a whole number of pixels');
  const dest = out ?? (luts.outDepth === 8 ? new Uint8Array(data.length) : new Uint16Array(data.length));
  if (dest.length < data.length) throw new CorrectionInputError('destination buffer is too small');
  if (channels === 3 && dest instanceof Uint8Array && luts.red instanceof Uint8Array && luts.green instanceof Uint8Array && luts.blue instanceof Uint8Array) {
    if (data instanceof Uint8Array) map8(data, dest, luts, luts.red, luts.green, luts.blue);
    else if (data instanceof Uint16Array) map16(data, dest, luts.red, luts.green, luts.blue);
    else mapAny(data, channels, luts, dest);
  } else {
    mapAny(data, channels, luts, dest);
  }
  return dest;
}

/** Where the turned and cropped render comes from, in pixels, for a scan of a given size. */
export interface GeometryPlan {
  /** Clockwise quarter turns. */
  quarterTurns: 0 | 1 | 2 | 3;
  /** Size of the turned scan. */
  turnedWidth: number;
  turnedHeight: number;
  /** The kept rectangle, in pixels of the turned scan. */
  left: number;
  top: number;
  width: number;
  height: number;
}

/**
 * Resolves a correction's turns and crop for a scan of `width` x `height` pixels. The crop is kept
 * in fractions, so the preview (a reduced copy) and the full-size render cut at the same place
 * of the print; each edge is rounded to the nearest pixel of the size at hand.
 */
export function geometryPlan(c: Pick<Correction, 'geometry'>, width: number, height: number): GeometryPlan {
  const turns = (c.geometry?.quarterTurns ?? 0) as 0 | 1 | 2 | 3;
  const turnedWidth = turns % 2 === 1 ? height : width;
  const turnedHeight = turns % 2 === 1 ? width : height;
  const r = c.geometry?.crop ?? { x: 0, y: 0, width: 1, height: 1 };
  const left = Math.min(turnedWidth - 1, Math.max(0, Math.round(r.x * turnedWidth)));
  const top = Math.min(turnedHeight - 1, Math.max(0, Math.round(r.y * turnedHeight)));
  const right = Math.min(turnedWidth, Math.max(left + 1, Math.round((r.x + r.width) * turnedWidth)));
  const bottom = Math.min(turnedHeight, Math.max(top + 1, Math.round((r.y + r.height) * turnedHeight)));
  return { quarterTurns: turns, turnedWidth, turnedHeight, left, top, width: right - left, height: bottom - top };
}

/**
 * Turns and crops interleaved pixels (any channel count) by a {@link geometryPlan}: a new buffer of
 * the same type, pixels copied whole, so nothing is resampled and the browser and the server cut
 * exactly alike. The source buffer is not changed.
 */
export function applyGeometry<T extends Uint8Array | Uint8ClampedArray | Uint16Array>(data: T, width: number, height: number, channels: number, plan: GeometryPlan): { data: T; width: number; height: number } {
  if (data.length !== width * height * channels) throw new CorrectionInputError('pixel buffer length does not match its size');
  const { quarterTurns: q, left, top, width: w, height: h } = plan;
  const out = new (data.constructor as { new (n: number): T })(w * h * channels);
  // source pixel of turned pixel (tx, ty): clockwise turns send source (sx, sy) to
  // 1: (H-1-sy, sx), 2: (W-1-sx, H-1-sy), 3: (sy, W-1-sx)
  let o = 0;
  for (let oy = 0; oy < h; oy++) {
    const ty = oy + top;
    if (q === 0) {
      const start = (ty * width + left) * channels;
      out.set(data.subarray(start, start + w * channels) as never, o);
      o += w * channels;
      continue;
    }
    for (let ox = 0; ox < w; ox++) {
      const tx = ox + left;
      const sx = q === 1 ? ty : q === 2 ? width - 1 - tx : width - 1 - ty;
      const sy = q === 1 ? height - 1 - tx : q === 2 ? height - 1 - ty : tx;
      let s = (sy * width + sx) * channels;
      for (let k = 0; k < channels; k++) out[o++] = data[s++];
    }
  }
  return { data: out, width: w, height: h };
}
