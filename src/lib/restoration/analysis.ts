/**
 * Measures how one print has aged, from a reduced copy of its scan, and proposes a correction.
 *
 * The model is the one in correction.ts: per channel D' = k·D + s. Two facts of the trade make
 * k and s measurable without knowing the original scene:
 *  - the paper base (a white border, or failing that the cleanest highlight) was close to neutral
 *    when new, so its colour now is the stain s;
 *  - each dye layer reached a similar maximum density when new (about 2.0-2.5 on glossy paper,
 *    from memory), and the deepest shadows of a photograph are near neutral (common practice),
 *    so the density range left above the paper base in each channel, compared with the channel
 *    that kept most, is the fraction of that dye left: k.
 * Only relative fading is measured: the best-kept dye is taken as unfaded. That keeps an
 * unfaded print unfaded, at the price of leaving an even, all-dye loss of contrast alone.
 */
import { densityFromReflectance, reflectanceFromDensity, srgbDecode, srgbEncode, srgbToLab, deltaE2000, type Triplet } from './colour';
import { CORRECTION_VERSION, LITTLE_ENDIAN, type Correction } from './correction';

/** Pixels handed to the analysis: interleaved, sRGB-encoded, already oriented and reduced. */
export interface ReducedPixels {
  data: Uint8Array | Uint8ClampedArray | Uint16Array;
  width: number;
  height: number;
  /** 3 (RGB) or 4 (RGBA, alpha ignored). */
  channels: number;
  depth: 8 | 16;
}

export type PaperBaseMethod = 'border' | 'highlight' | 'pooled' | 'not_found';
export type FadeGrade = 'none' | 'slight' | 'moderate' | 'severe';

/** What one dye layer has kept and what stain its channel gained. */
export interface DyeEstimate {
  /** Share of the dye's density left, 0-100 %. */
  remainingPercent: number;
  /** Density added to this channel by stain (D = -log10 R). */
  stainDensity: number;
  confidence: number;
}

/** Everything the engine measured on one print, and the correction it proposes. */
export interface Analysis {
  paperBase: {
    /** Encoded sRGB 0..1 as scanned. */
    srgb: Triplet;
    /** CIELAB, D65 white of the sRGB matrix. */
    lab: Triplet;
    /** CIEDE2000 between the paper base and a neutral of the same lightness. */
    deltaE00FromWhite: number;
    method: PaperBaseMethod;
    confidence: number;
  };
  dyes: { cyan: DyeEstimate; magenta: DyeEstimate; yellow: DyeEstimate };
  fadeGrade: FadeGrade;
  /** Largest dye loss measured, 0..1 (ISO 18909 expresses fading as this loss). */
  dyeLoss: number;
  /** Largest stain density measured. */
  stain: number;
  /** The print looks like a black-and-white print (only its base needs neutralising). */
  monochrome: boolean;
  /** Past the end points: the negative, if the family has it, holds more than this print. */
  rescanAdvised: boolean;
  proposed: Correction;
  /** 0..1: how far the estimate can be trusted on this print alone. */
  confidence: number;
  /** Set when {@link poolAnalyses} replaced or blended this print's estimate with its siblings'. */
  pooled?: { siblings: number; ownWeight: number };
  /** Where the border was found, as fractions of width/height cut from each side (0 = none). */
  border: { top: number; right: number; bottom: number; left: number };
}

/**
 * Grade thresholds, in one place.
 * - `none`: below what the engine can tell from scan noise and scene content (our own floor); a
 *   print under it is left exactly as it is.
 * - `slight`: dye losses under about 15-20 % are rarely noticed (a film maker's published
 *   print-life note, CHECKS.md), so 15 %.
 * - `moderate` -> `severe`: a 30 % loss from D = 1.0 is the illustrative end point of ISO 18909
 *   testing; the stain end point is about 0.10-0.15 rise in minimum density (from memory).
 * The loss is comparable with ISO 18909's: under D' = k·D + s the fractional loss 1 - k is the
 * same at every starting density, D = 1.0 included.
 */
export const FADE_GRADE_THRESHOLDS = {
  none: { dyeLoss: 0.04, stain: 0.02 },
  slight: { dyeLoss: 0.15, stain: 0.1 },
  moderate: { dyeLoss: 0.3, stain: 0.15 },
} as const;

/** Grades a print from its largest dye loss (0..1) and largest stain density. */
export function gradeFade(dyeLoss: number, stain: number): FadeGrade {
  const t = FADE_GRADE_THRESHOLDS;
  if (dyeLoss < t.none.dyeLoss && stain < t.none.stain) return 'none';
  if (dyeLoss < t.slight.dyeLoss && stain < t.slight.stain) return 'slight';
  if (dyeLoss < t.moderate.dyeLoss && stain <= t.moderate.stain) return 'moderate';
  return 'severe';
}

/** Share of the highlight-ranked pixels taken as the paper base when there is no border. */
const HIGHLIGHT_SHARE = 0.005;
/** Percentiles of density that stand for each channel's deepest shadows. */
const SHADOW_PERCENTILES = [0.98, 0.995];
/** Below this density range above the paper base, a scene has too few shadows to judge fading. */
const FULL_RANGE = 1.2;
/** Limits on what the engine will propose; beyond them it is guessing. */
const MIN_RETENTION = 0.3;
const MAX_STAIN = 0.6;
/** Confidence under which {@link poolAnalyses} blends a print with its siblings. */
export const POOL_CONFIDENCE = 0.5;
/** Confidence at or under which a pooled print takes its siblings' estimate outright. */
const POOL_FLOOR = 0.2;

const densityOf8 = (() => {
  const t = new Float64Array(256);
  for (let i = 0; i < 256; i++) t[i] = densityFromReflectance(srgbDecode(i / 255));
  return t;
})();

interface Rect {
  x0: number;
  y0: number;
  x1: number;
  y1: number;
}

/** Every `step`-th pixel, across and down, of a rectangle of 8-bit pixels `w` wide with `ch` channels. */
interface Grid extends Rect {
  v: Uint8Array;
  ch: number;
  w: number;
  step: number;
}

/**
 * An analysis copy of at most `longSide` pixels on the long side, taken from full-resolution
 * pixels by keeping the centre pixel of each block: a tenth of the memory reads of averaging.
 * The analysis works on histograms and medians, for which a point sample serves as well as a
 * mean. Always 8-bit RGB.
 */
export function samplePixels(full: ReducedPixels, longSide = 1280): ReducedPixels {
  const f = Math.max(1, Math.ceil(Math.max(full.width, full.height) / longSide));
  const w = Math.max(1, Math.floor(full.width / f));
  const h = Math.max(1, Math.floor(full.height / f));
  const ch = full.channels;
  const out = new Uint8Array(w * h * 3);
  const half = f >> 1;
  if (full.data instanceof Uint8Array) sample8(full.data, out, full.width, w, h, f, half, ch);
  else sampleWide(full.data, out, full.width, w, h, f, half, ch, full.depth === 16 ? 8 : 0);
  return { data: out, width: w, height: h, channels: 3, depth: 8 };
}

// One loop per array type, so that V8 keeps each monomorphic (a shared one runs at a third of the speed).
function sample8(src: Uint8Array, out: Uint8Array, width: number, w: number, h: number, f: number, half: number, ch: number): void {
  let o = 0;
  const di = f * ch;
  for (let y = 0; y < h; y++) {
    let i = ((y * f + half) * width + half) * ch;
    for (let x = 0; x < w; x++, i += di) {
      out[o] = src[i];
      out[o + 1] = src[i + 1];
      out[o + 2] = src[i + 2];
      o += 3;
    }
  }
}

function sampleWide(src: ArrayLike<number>, out: Uint8Array, width: number, w: number, h: number, f: number, half: number, ch: number, shift: number): void {
  let o = 0;
  const di = f * ch;
  for (let y = 0; y < h; y++) {
    let i = ((y * f + half) * width + half) * ch;
    for (let x = 0; x < w; x++, i += di) {
      out[o++] = src[i] >> shift;
      out[o++] = src[i + 1] >> shift;
      out[o++] = src[i + 2] >> shift;
    }
  }
}

/** 8-bit view of the pixels, whatever their depth. */
function to8(p: ReducedPixels): { v: Uint8Array; ch: number } {
  if (p.depth === 8 && p.data instanceof Uint8Array) return { v: p.data, ch: p.channels };
  const v = new Uint8Array(p.data.length);
  if (p.depth === 16) for (let i = 0; i < v.length; i++) v[i] = p.data[i] >> 8;
  else v.set(p.data);
  return { v, ch: p.channels };
}

function histograms(v: Uint8Array, ch: number, width: number, r: Rect): { h: Uint32Array[]; n: number } {
  // four sets of the three channels' bins, one per pixel of a group of four, summed at the end:
  // neighbouring pixels of a print are often alike, and one set would make each count wait for
  // the last one to the same bin
  const sets = new Uint32Array(HISTOGRAM_SETS * 768);
  const words = LITTLE_ENDIAN && ch === 3 && v.byteOffset % 4 === 0 ? new Uint32Array(v.buffer, v.byteOffset, v.length >> 2) : null;
  for (let y = r.y0; y < r.y1; y++) {
    const from = y * width + r.x0;
    const to = y * width + r.x1;
    if (words) histogramRowWords(v, words, from, to, sets);
    else histogramRowBytes(v, ch, from, to, sets);
  }
  const h = [new Uint32Array(256), new Uint32Array(256), new Uint32Array(256)];
  for (let k = 0; k < HISTOGRAM_SETS; k++) {
    for (let c = 0; c < 3; c++) {
      const base = k * 768 + c * 256;
      const out = h[c];
      for (let b = 0; b < 256; b++) out[b] += sets[base + b];
    }
  }
  return { h, n: Math.max(0, r.x1 - r.x0) * Math.max(0, r.y1 - r.y0) };
}

const HISTOGRAM_SETS = 4;

/** Pixels `from` to `to` (pixel indices) into the first set of bins, one byte at a time. */
function histogramRowBytes(v: Uint8Array, ch: number, from: number, to: number, sets: Uint32Array): void {
  const end = to * ch;
  for (let i = from * ch; i < end; i += ch) {
    sets[v[i]]++;
    sets[256 + v[i + 1]]++;
    sets[512 + v[i + 2]]++;
  }
}

/**
 * Pixels `from` to `to` of RGB bytes, where whole groups of four pixels are read as three 32-bit
 * words (a group that starts at a pixel index divisible by four starts on a word, red first),
 * each pixel of the group into a set of its own; the pixels before the first group and after the
 * last go byte by byte. The counts are exactly those of the byte loop, about twice as fast.
 */
function histogramRowWords(v: Uint8Array, words: Uint32Array, from: number, to: number, sets: Uint32Array): void {
  const first = Math.min(to, (from + 3) & ~3);
  const last = Math.max(first, to & ~3);
  if (first > from) histogramRowBytes(v, 3, from, first, sets);
  const end = (last * 3) >> 2;
  for (let w = (first * 3) >> 2; w < end; w += 3) {
    const a = words[w];
    const b = words[w + 1];
    const c = words[w + 2];
    sets[a & 255]++;
    sets[256 + ((a >>> 8) & 255)]++;
    sets[512 + ((a >>> 16) & 255)]++;
    sets[768 + (a >>> 24)]++;
    sets[1024 + (b & 255)]++;
    sets[1280 + ((b >>> 8) & 255)]++;
    sets[1536 + ((b >>> 16) & 255)]++;
    sets[1792 + (b >>> 24)]++;
    sets[2048 + (c & 255)]++;
    sets[2304 + ((c >>> 8) & 255)]++;
    sets[2560 + ((c >>> 16) & 255)]++;
    sets[2816 + (c >>> 24)]++;
  }
  if (to > last) histogramRowBytes(v, 3, last, to, sets);
}

/** Code value at fraction p of a histogram (0 = darkest code). */
function percentileCode(h: Uint32Array, n: number, p: number): number {
  const target = p * (n - 1);
  let acc = 0;
  for (let c = 0; c < 256; c++) {
    acc += h[c];
    if (acc > target) return c;
  }
  return 255;
}

function clamp(x: number, lo: number, hi: number): number {
  return x < lo ? lo : x > hi ? hi : x;
}

interface BorderFind {
  paper: Triplet; // 8-bit codes
  rect: Rect;
  uniformity: number;
  cut: { top: number; right: number; bottom: number; left: number };
}

/**
 * How many of `count` pixels, from index `start` in steps of `stride`, are within 12 codes of
 * the paper colour in every channel: a row (stride one pixel) or a column (stride one row).
 * The hot loops of the analysis are small functions of plain numbers and typed arrays, each
 * optimised by V8 on its own as soon as it runs hot (a loop inside a long function is optimised
 * before the code after it has run, and that code then throws the optimised version away).
 */
function paperInLine(v: Uint8Array, start: number, stride: number, count: number, p0: number, p1: number, p2: number): number {
  let k = 0;
  for (let n = 0, i = start; n < count; n++, i += stride) {
    if (Math.abs(v[i] - p0) <= 12 && Math.abs(v[i + 1] - p1) <= 12 && Math.abs(v[i + 2] - p2) <= 12) k++;
  }
  return k;
}

/**
 * Looks for a uniform bright frame on all four sides. The very edge is skipped: scanners often
 * catch a sliver of their own bed there.
 */
function findBorder(v: Uint8Array, ch: number, w: number, h: number): BorderFind | null {
  const skip = Math.max(1, Math.round(0.004 * Math.min(w, h)));
  const depth = Math.max(2, Math.round(0.02 * Math.min(w, h)));
  const sides: Rect[] = [
    { x0: skip, y0: skip, x1: w - skip, y1: skip + depth },
    { x0: w - skip - depth, y0: skip, x1: w - skip, y1: h - skip },
    { x0: skip, y0: h - skip - depth, x1: w - skip, y1: h - skip },
    { x0: skip, y0: skip, x1: skip + depth, y1: h - skip },
  ];
  const medians: Triplet[] = [];
  let uniformity = 1;
  for (const r of sides) {
    if (r.x1 <= r.x0 || r.y1 <= r.y0) return null;
    const { h: hist, n } = histograms(v, ch, w, r);
    const med = [0, 1, 2].map((c) => percentileCode(hist[c], n, 0.5)) as Triplet;
    let within = 0;
    for (let c = 0; c < 3; c++) {
      let s = 0;
      for (let k = Math.max(0, med[c] - 6); k <= Math.min(255, med[c] + 6); k++) s += hist[c][k];
      within += s / n / 3;
    }
    uniformity = Math.min(uniformity, within);
    medians.push(med);
  }
  if (uniformity < 0.9) return null;
  for (let c = 0; c < 3; c++) {
    const vals = medians.map((m) => m[c]);
    if (Math.max(...vals) - Math.min(...vals) > 10) return null;
  }
  const paper = [0, 1, 2].map((c) => medians.reduce((a, m) => a + m[c], 0) / 4) as Triplet;
  if (Math.max(...paper) < 170) return null;

  const [p0, p1, p2] = paper;
  const limitY = Math.floor(h * 0.3);
  const limitX = Math.floor(w * 0.3);
  const rowNeed = 0.9 * w;
  const colNeed = 0.9 * h;
  let top = 0;
  while (top < limitY && paperInLine(v, (top * w) * ch, ch, w, p0, p1, p2) >= rowNeed) top++;
  let bottom = 0;
  while (bottom < limitY && paperInLine(v, ((h - 1 - bottom) * w) * ch, ch, w, p0, p1, p2) >= rowNeed) bottom++;
  let left = 0;
  while (left < limitX && paperInLine(v, left * ch, w * ch, h, p0, p1, p2) >= colNeed) left++;
  let right = 0;
  while (right < limitX && paperInLine(v, (w - 1 - right) * ch, w * ch, h, p0, p1, p2) >= colNeed) right++;
  // a margin past the found edge keeps the print's own edge (often a soft line) out of the statistics
  const m = Math.max(1, Math.round(0.01 * Math.min(w, h)));
  const rect = { x0: left + m, y0: top + m, x1: w - right - m, y1: h - bottom - m };
  if (rect.x1 - rect.x0 < 8 || rect.y1 - rect.y0 < 8) return null;
  return { paper, rect, uniformity, cut: { top: top / h, right: right / w, bottom: bottom / h, left: left / w } };
}

/** Histogram of summed three-channel density, every `s`-th pixel of `r` in each direction. */
function summedDensityHistogram(v: Uint8Array, ch: number, w: number, x0: number, y0: number, x1: number, y1: number, s: number, scale: number, hist: Uint32Array): number {
  const top = hist.length - 1;
  let n = 0;
  for (let y = y0; y < y1; y += s) {
    let i = (y * w + x0) * ch;
    for (let x = x0; x < x1; x += s, i += s * ch) {
      hist[Math.min(top, Math.floor((densityOf8[v[i]] + densityOf8[v[i + 1]] + densityOf8[v[i + 2]]) * scale))]++;
      n++;
    }
  }
  return n;
}

/** Per-channel histograms of the sampled pixels whose summed-density bin is at most `cut`; returns their count. */
function histogramsUpTo(v: Uint8Array, ch: number, w: number, x0: number, y0: number, x1: number, y1: number, s: number, scale: number, cut: number, h0: Uint32Array, h1: Uint32Array, h2: Uint32Array): number {
  let count = 0;
  for (let y = y0; y < y1; y += s) {
    let i = (y * w + x0) * ch;
    for (let x = x0; x < x1; x += s, i += s * ch) {
      const b = Math.floor((densityOf8[v[i]] + densityOf8[v[i + 1]] + densityOf8[v[i + 2]]) * scale);
      if (b <= cut) {
        h0[v[i]]++;
        h1[v[i + 1]]++;
        h2[v[i + 2]]++;
        count++;
      }
    }
  }
  return count;
}

/** Median colour of the cleanest highlights: the pixels of lowest total density. */
function findHighlight(v: Uint8Array, ch: number, w: number, r: Rect): { paper: Triplet; count: number; spread: number } {
  // every other pixel in each direction: highlights are regions, not single pixels
  const s = r.x1 - r.x0 > 400 ? 2 : 1;
  const bins = 1024;
  const scale = bins / 9; // summed density of three channels is at most 9
  const hist = new Uint32Array(bins);
  const n = summedDensityHistogram(v, ch, w, r.x0, r.y0, r.x1, r.y1, s, scale, hist);
  const want = Math.max(1, Math.round(n * HIGHLIGHT_SHARE));
  let acc = 0;
  let cut = 0;
  while (cut < bins - 1 && acc + hist[cut] < want) acc += hist[cut++];
  const hs = [new Uint32Array(256), new Uint32Array(256), new Uint32Array(256)];
  const count = histogramsUpTo(v, ch, w, r.x0, r.y0, r.x1, r.y1, s, scale, cut, hs[0], hs[1], hs[2]);
  const paper = [0, 1, 2].map((c) => percentileCode(hs[c], count, 0.5)) as Triplet;
  const spread = Math.max(
    ...[0, 1, 2].map((c) => densityOf8[percentileCode(hs[c], count, 0.1)] - densityOf8[percentileCode(hs[c], count, 0.9)]),
  );
  return { paper, count, spread };
}

function paperReport(codes: Triplet, method: PaperBaseMethod, confidence: number): Analysis['paperBase'] {
  const srgb = codes.map((c) => c / 255) as Triplet;
  const lab = srgbToLab(srgb);
  return { srgb, lab, deltaE00FromWhite: deltaE2000(lab, [lab[0], 0, 0]), method, confidence };
}

/** Builds the correction that undoes the given retention k and stain s per channel. */
export function correctionFromEstimate(retention: Triplet, stain: Triplet, paperFloorDensity = 0): Correction {
  const whitePoint = stain.map((s) => round(srgbEncode(reflectanceFromDensity(paperFloorDensity + s)), 6)) as Triplet;
  const gain = (k: number) => round(1 / k, 5);
  return {
    version: CORRECTION_VERSION,
    whitePoint,
    curves: { red: { densityGain: gain(retention[0]) }, green: { densityGain: gain(retention[1]) }, blue: { densityGain: gain(retention[2]) } },
    strength: 1,
  };
}

function round(x: number, digits: number): number {
  const f = Math.pow(10, digits);
  return Math.round(x * f) / f;
}

interface Estimate {
  retention: Triplet;
  stain: Triplet;
  paperFloor: number;
}

/** Applies the "do no harm" floor, grades, and fills in the parts of an Analysis that follow from an estimate. */
function finish(
  est: Estimate,
  paperBase: Analysis['paperBase'],
  dyeConfidence: Triplet,
  confidence: number,
  monochrome: boolean,
  border: Analysis['border'],
): Analysis {
  const t = FADE_GRADE_THRESHOLDS.none;
  let retention = est.retention.map((k) => clamp(k, MIN_RETENTION, 1)) as Triplet;
  let stain = est.stain.map((s) => clamp(s, 0, MAX_STAIN)) as Triplet;
  let dyeLoss = 1 - Math.min(...retention);
  let maxStain = Math.max(...stain);
  // Do no harm: a change the engine cannot tell from noise is not made at all.
  if (dyeLoss < t.dyeLoss) {
    retention = [1, 1, 1];
    dyeLoss = 0;
  }
  if (maxStain < t.stain) {
    stain = [0, 0, 0];
    maxStain = 0;
  }
  const fadeGrade = gradeFade(dyeLoss, maxStain);
  const dye = (i: number): DyeEstimate => ({
    remainingPercent: round(retention[i] * 100, 2),
    stainDensity: round(stain[i], 4),
    confidence: round(dyeConfidence[i], 3),
  });
  return {
    paperBase,
    dyes: { cyan: dye(0), magenta: dye(1), yellow: dye(2) },
    fadeGrade,
    dyeLoss: round(dyeLoss, 4),
    stain: round(maxStain, 4),
    monochrome,
    rescanAdvised: fadeGrade === 'severe' && dyeLoss >= FADE_GRADE_THRESHOLDS.moderate.dyeLoss,
    proposed: correctionFromEstimate(retention, stain, est.paperFloor),
    confidence: round(confidence, 3),
    border,
  };
}

/** Tolerances, per pass, on how far from neutral a pixel may be after correction to count as a neutral. */
const NEUTRAL_TOLERANCES = [0.25, 0.12, 0.06, 0.04];
/** Neutrals lighter than this above the paper base carry too little dye to measure a ratio on. */
const MIN_NEUTRAL_DENSITY = 0.15;

/**
 * Densities above the paper base of the pixels on a grid of `step` that carry enough dye in every
 * channel to measure a ratio on, into dr/dg/db; returns how many.
 */
function collectNeutralCandidates(g: Grid, pr: number, pg: number, pb: number, dr: Float32Array, dg: Float32Array, db: Float32Array): number {
  const { v, ch, w, x0, y0, x1, y1, step } = g;
  const least = MIN_NEUTRAL_DENSITY * 0.5;
  let m = 0;
  for (let y = y0; y < y1; y += step) {
    for (let x = x0; x < x1; x += step) {
      const i = (y * w + x) * ch;
      // 8-bit codes below 3 are clipped shadows: their density is unknown
      if (v[i] < 3 || v[i + 1] < 3 || v[i + 2] < 3) continue;
      const a = densityOf8[v[i]] - pr;
      const b = densityOf8[v[i + 1]] - pg;
      const c = densityOf8[v[i + 2]] - pb;
      if (a < least || b < least || c < least) continue;
      dr[m] = a;
      dg[m] = b;
      db[m] = c;
      m++;
    }
  }
  return m;
}

/**
 * One pass of {@link fitOnNeutrals}: the candidates that come out within `tol` of neutral under
 * the gains ir/ig/ib, binned by their red:green and blue:green density ratios (weighted by
 * density) and by depth. Returns how many; the deepest goes to depthOut[0].
 */
function neutralPass(
  dr: Float32Array,
  dg: Float32Array,
  db: Float32Array,
  m: number,
  ir: number,
  ig: number,
  ib: number,
  tol: number,
  rgHist: Float64Array,
  bgHist: Float64Array,
  depthHist: Uint32Array,
  depthOut: Float64Array,
): number {
  let count = 0;
  let depth = 0;
  for (let j = 0; j < m; j++) {
    const G = dg[j] * ig;
    if (G < MIN_NEUTRAL_DENSITY) continue;
    const lo = G * (1 - tol);
    const hi = G * (1 + tol);
    const R = dr[j] * ir;
    const B = db[j] * ib;
    if (R < lo || R > hi || B < lo || B > hi) continue;
    const inv = RATIO_SCALE / dg[j];
    // every value here is positive: adding a half and truncating rounds as Math.round does
    const rg = (dr[j] * inv + 0.5) | 0;
    const bg = (db[j] * inv + 0.5) | 0;
    const dep = (G * 20 + 0.5) | 0;
    rgHist[rg < RATIO_BINS ? rg : RATIO_BINS - 1] += G;
    bgHist[bg < RATIO_BINS ? bg : RATIO_BINS - 1] += G;
    depthHist[dep < 60 ? dep : 60]++;
    count++;
    if (G > depth) depth = G;
  }
  depthOut[0] = depth;
  return count;
}

/**
 * Refines dye retention on the pixels that come out near neutral: in those the three dyes were
 * in balance when new (common practice: greys and blacks of a scene are neutral), so the ratio of
 * their densities now is the ratio of retentions. Each pass tightens the tolerance around the
 * previous estimate; a scene with too few neutrals keeps the shadow estimate.
 */
function fitOnNeutrals(
  v: Uint8Array,
  ch: number,
  w: number,
  r: Rect,
  paperD: Triplet,
  start: Triplet,
): { retention: Triplet; share: number; depth: number; spread: number } | null {
  const step = Math.max(1, Math.floor(Math.sqrt(((r.x1 - r.x0) * (r.y1 - r.y0)) / 40000)));
  const cap = (Math.ceil((r.x1 - r.x0) / step) + 1) * (Math.ceil((r.y1 - r.y0) / step) + 1);
  const dr = new Float32Array(cap);
  const dg = new Float32Array(cap);
  const db = new Float32Array(cap);
  const m = collectNeutralCandidates({ v, ch, w, x0: r.x0, y0: r.y0, x1: r.x1, y1: r.y1, step }, paperD[0], paperD[1], paperD[2], dr, dg, db);
  const total = r.x1 > r.x0 && r.y1 > r.y0 ? Math.ceil((r.x1 - r.x0) / step) * Math.ceil((r.y1 - r.y0) / step) : 0;
  const rgHist = new Float64Array(RATIO_BINS);
  const bgHist = new Float64Array(RATIO_BINS);
  let k: Triplet = [...start];
  const depthHist = new Uint32Array(61);
  const passDepth = new Float64Array(1);
  let last: { retention: Triplet; share: number; depth: number; spread: number } | null = null;
  for (const tol of NEUTRAL_TOLERANCES) {
    rgHist.fill(0);
    bgHist.fill(0);
    depthHist.fill(0);
    const count = neutralPass(dr, dg, db, m, 1 / k[0], 1 / k[1], 1 / k[2], tol, rgHist, bgHist, depthHist, passDepth);
    const depth = passDepth[0];
    if (count < 30) break;
    const kr = histogramMedian(rgHist) / RATIO_SCALE;
    const kb = histogramMedian(bgHist) / RATIO_SCALE;
    const top = Math.max(kr, 1, kb);
    k = [kr / top, 1 / top, kb / top];
    // a grey scale spans densities; one patch of a single colour that happens to look neutral does not
    const at = (p: number) => {
      let acc = 0;
      for (let b = 0; b < depthHist.length; b++) if ((acc += depthHist[b]) >= p * count) return b / 20;
      return 3;
    };
    last = { retention: k, share: count / Math.max(1, total), depth, spread: at(0.9) - at(0.1) };
  }
  return last;
}

/** Density ratios between channels are binned at 1/2000 up to 4. */
const RATIO_SCALE = 2000;
const RATIO_BINS = 4 * RATIO_SCALE + 1;

function histogramMedian(h: Float64Array): number {
  let total = 0;
  for (let i = 0; i < h.length; i++) total += h[i];
  let acc = 0;
  for (let i = 0; i < h.length; i++) {
    acc += h[i];
    if (acc >= total / 2) return i;
  }
  return h.length - 1;
}

function sceneVariety(v: Uint8Array, ch: number, w: number, inner: Rect, paperD: Triplet, retention: Triplet): { variety: number; neutralShare: number } {
  const step = Math.max(1, Math.floor(Math.sqrt(((inner.x1 - inner.x0) * (inner.y1 - inner.y0)) / 40000)));
  const sums = new Float64Array(6);
  const g = (k: number) => 1 / Math.max(k, MIN_RETENTION);
  varietySums({ v, ch, w, x0: inner.x0, y0: inner.y0, x1: inner.x1, y1: inner.y1, step }, paperD[0], paperD[1], paperD[2], g(retention[0]), g(retention[1]), g(retention[2]), sums);
  const [neutrals, sampled, sumA, sumB, sumAA, sumBB] = sums;
  const n = Math.max(1, sampled);
  const variety = Math.sqrt(Math.max(0, sumAA / n - (sumA / n) ** 2) + Math.max(0, sumBB / n - (sumB / n) ** 2));
  return { variety, neutralShare: neutrals / n };
}

/**
 * Over a grid of `step`: how many pixels come out near neutral under the gains, how many were
 * looked at, and the sums and sums of squares of their red-green and blue-green density
 * differences, into `out` in that order.
 */
function varietySums(g: Grid, pr: number, pg: number, pb: number, gr: number, gg: number, gb: number, out: Float64Array): void {
  const { v, ch, w, x0, y0, x1, y1, step } = g;
  let neutrals = 0;
  let sampled = 0;
  let sumA = 0;
  let sumB = 0;
  let sumAA = 0;
  let sumBB = 0;
  for (let y = y0; y < y1; y += step) {
    for (let x = x0; x < x1; x += step) {
      const i = (y * w + x) * ch;
      const dr = (densityOf8[v[i]] - pr) * gr;
      const dg = (densityOf8[v[i + 1]] - pg) * gg;
      const db = (densityOf8[v[i + 2]] - pb) * gb;
      const a = dr - dg;
      const b = db - dg;
      if (Math.abs(a) < 0.04 + 0.03 * dg && Math.abs(b) < 0.04 + 0.03 * dg) neutrals++;
      sumA += a;
      sumB += b;
      sumAA += a * a;
      sumBB += b * b;
      sampled++;
    }
  }
  out[0] = neutrals;
  out[1] = sampled;
  out[2] = sumA;
  out[3] = sumB;
  out[4] = sumAA;
  out[5] = sumBB;
}

/** Measures paper base, dye retention, stain and grade of one print from a reduced copy of its scan. */
export function analysePixels(reduced: ReducedPixels): Analysis {
  const { width: w, height: h } = reduced;
  if (reduced.channels < 3) throw new RangeError('analysePixels needs RGB pixels (expand greyscale first)');
  if (w < 1 || h < 1 || reduced.data.length < w * h * reduced.channels) throw new RangeError('pixel buffer smaller than width x height');
  const { v, ch } = to8(reduced);

  const border = w >= 32 && h >= 32 ? findBorder(v, ch, w, h) : null;
  const inner: Rect = border?.rect ?? { x0: 0, y0: 0, x1: w, y1: h };

  let paperCodes: Triplet;
  let method: PaperBaseMethod;
  let paperConfidence: number;
  if (border) {
    paperCodes = border.paper;
    method = 'border';
    paperConfidence = clamp(0.6 + 0.4 * (border.uniformity - 0.9) / 0.1, 0, 1);
  } else {
    const hl = findHighlight(v, ch, w, inner);
    paperCodes = hl.paper;
    method = 'highlight';
    const bright = Math.min(...paperCodes.map((c) => densityOf8[Math.round(c)]));
    // a highlight that is dark, scattered or few in number is a poor stand-in for paper
    paperConfidence = 0.6 * clamp(1 - hl.spread / 0.15, 0, 1) * clamp((0.35 - bright) / 0.25, 0, 1) * clamp(hl.count / 50, 0, 1);
  }
  let paperD = paperCodes.map((c) => densityFromReflectance(srgbDecode(c / 255))) as Triplet;
  const paperFloor = Math.min(...paperD);
  let stain = paperD.map((d) => d - paperFloor) as Triplet;
  // Stain is a yellowing: it raises blue density most and red least. A highlight that is bluish or
  // reddish instead is scene content (sky, a lamp), not paper: claim no stain, and measure the
  // dyes from a neutral base rather than from that colour.
  if (method === 'highlight' && (stain[2] < Math.max(stain[0], stain[1]) - 0.01 || stain[0] > stain[1] + 0.02)) {
    stain = [0, 0, 0];
    paperD = [paperFloor, paperFloor, paperFloor];
    paperConfidence = Math.min(paperConfidence, 0.15);
  }
  if (paperConfidence < 0.1) method = method === 'border' ? method : 'not_found';

  const { h: hist, n } = histograms(v, ch, w, inner);
  const ranges: Triplet[] = SHADOW_PERCENTILES.map(
    (p) => [0, 1, 2].map((c) => Math.max(densityOf8[percentileCode(hist[c], n, 1 - p)] - paperD[c], 1e-3)) as Triplet,
  );
  const shadowRetentions = ranges.map((r) => {
    const top = Math.max(...r);
    return r.map((x) => x / top) as Triplet;
  });
  const firstGuess = [0, 1, 2].map((c) => shadowRetentions.reduce((a, r) => a + r[c], 0) / shadowRetentions.length) as Triplet;
  const fullness = clamp(Math.max(...ranges[ranges.length - 1]) / FULL_RANGE, 0, 1);

  const fit = fitOnNeutrals(v, ch, w, inner, paperD, firstGuess);
  const retention = fit?.retention ?? firstGuess;
  // trust grows with the share of near-neutral pixels, how deep and how wide in density they
  // reach, and shrinks when the neutrals tell a very different story from the shadows
  const disagreement = fit ? Math.max(...fit.retention.map((k, c) => Math.abs(k - firstGuess[c]))) : 0;
  const neutralTrust = fit
    ? clamp(fit.share / 0.02, 0, 1) * clamp(fit.depth / 1.0, 0, 1) * clamp(fit.spread / 0.6, 0, 1) * clamp(1 - (disagreement - 0.1) / 0.2, 0.3, 1)
    : 0;
  const dyeConfidence = [0, 1, 2].map((c) => {
    const fallback = fullness * clamp(1 - Math.abs(shadowRetentions[0][c] - shadowRetentions[1][c]) / 0.1, 0, 1) * 0.3;
    return clamp(Math.max(neutralTrust * (0.6 + 0.4 * fullness), fallback), 0, 1);
  }) as Triplet;

  // colour variety: a scene of mostly one colour says little about the dyes
  const { variety, neutralShare } = sceneVariety(v, ch, w, inner, paperD, retention);
  const monochrome = neutralShare > 0.97;
  const sceneFactor = monochrome ? 1 : clamp(neutralShare / 0.05, 0, 1) * clamp(variety / 0.1, 0, 1);
  const meanDye = (dyeConfidence[0] + dyeConfidence[1] + dyeConfidence[2]) / 3;
  const confidence = (0.4 * paperConfidence + 0.6 * meanDye) * (0.5 + 0.5 * sceneFactor);

  return finish(
    { retention, stain, paperFloor },
    paperReport(paperCodes, method, paperConfidence),
    dyeConfidence,
    confidence,
    monochrome,
    border?.cut ?? { top: 0, right: 0, bottom: 0, left: 0 },
  );
}

function weightedMedian(values: number[], weights: number[]): number {
  const idx = values.map((_, i) => i).sort((a, b) => values[a] - values[b]);
  const total = weights.reduce((a, b) => a + b, 0);
  let acc = 0;
  for (const i of idx) {
    acc += weights[i];
    if (acc >= total / 2) return values[i];
  }
  return values[idx[idx.length - 1]];
}

/**
 * Batch-aware estimates: prints of one pack or drawer usually share paper and ageing. Every print
 * whose own confidence is under `threshold` is blended toward the confidence-weighted median of
 * its siblings, in proportion to how little it can be trusted alone. Confident prints are returned
 * unchanged. The input is not modified.
 */
export function poolAnalyses(analyses: Analysis[], threshold = POOL_CONFIDENCE): Analysis[] {
  if (analyses.length < 2) return analyses.slice();
  const trusted = analyses.filter((a) => a.confidence >= threshold);
  const donors = trusted.length > 0 ? trusted : analyses;
  const weights = donors.map((a) => Math.max(a.confidence, 1e-3));
  const dyeKeys = ['cyan', 'magenta', 'yellow'] as const;
  const refRetention = dyeKeys.map((k) => weightedMedian(donors.map((a) => a.dyes[k].remainingPercent / 100), weights)) as Triplet;
  const refStain = dyeKeys.map((k) => weightedMedian(donors.map((a) => a.dyes[k].stainDensity), weights)) as Triplet;
  return analyses.map((a) => {
    if (a.confidence >= threshold || (trusted.length === 0 && donors.length < 2)) return a;
    // below POOL_FLOOR a print's own estimate counts for nothing; between it and the threshold, in proportion
    const own = clamp((a.confidence - POOL_FLOOR) / (threshold - POOL_FLOOR), 0, 1);
    const siblings = trusted.length > 0 ? trusted.length : donors.length - 1;
    const retention = dyeKeys.map((k, i) => own * (a.dyes[k].remainingPercent / 100) + (1 - own) * refRetention[i]) as Triplet;
    const stain = dyeKeys.map((k, i) => own * a.dyes[k].stainDensity + (1 - own) * refStain[i]) as Triplet;
    const floor = Math.min(...a.paperBase.srgb.map((c) => densityFromReflectance(srgbDecode(c))));
    const dyeConf = dyeKeys.map((k) => Math.max(a.dyes[k].confidence, threshold * (1 - own))) as Triplet;
    const paperBase = a.paperBase.method === 'border' ? a.paperBase : { ...a.paperBase, method: 'pooled' as const };
    const next = finish(
      { retention, stain, paperFloor: floor },
      paperBase,
      dyeConf,
      Math.max(a.confidence, threshold * (1 - own) + a.confidence * own),
      a.monochrome,
      a.border,
    );
    next.pooled = { siblings, ownWeight: round(own, 3) };
    return next;
  });
}
