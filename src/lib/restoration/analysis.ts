/**
 * Measures how one print has aged, from a reduced copy of its scan, and proposes a correction.
 *
 * The correction (correction.ts) undoes, per channel, D' = k·D + s: a change of slope k of each dye
 * layer's density and an offset s (stain, paper base, scanner). That is a first approximation of
 * dark and light ageing (McCormick-Goodhart & Wilhelm 2003), and the estimate does not assume the
 * scene: a rose, a lawn or a sunset is not read as fading because a rule says greys are grey.
 * Instead the statistics of a scan (printFeatures) go to an ensemble fitted on real photographs
 * aged by a simulator written apart from this code (print-model.ts, `npm run fit-priors`), which
 * answers how the print has aged and how likely it is that it aged at all. Then:
 *  - do no harm: the strength of the correction follows that probability, so a print that looks
 *    like an unfaded photograph is left as it is;
 *  - physics where it is measured: a found white border is the paper base, and its colour is the
 *    stain (a border that is paper white means no stain); stain only ever yellows (blue density
 *    rises most, red least);
 *  - a batch knows more than a print: poolAnalyses combines prints that aged together, each moved
 *    toward the batch as far as its own estimate is unsure;
 *  - each print carries the error its correction is expected to have (expectedDeltaE00).
 */
import { densityFromReflectance, deltaE2000, reflectanceFromDensity, srgbDecode, srgbEncode, srgbToLab, type Triplet } from './colour';
import { CORRECTION_VERSION, LITTLE_ENDIAN, identityCorrection, type Correction } from './correction';
import { estimateAgeing, estimateVariance, expectedError, type FittedPriors, type ModelEstimate } from './print-model';
import { PRIORS } from './priors';

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
  /** Share of the dye's density left, 0-100 % (over 100 % when the scan is flatter than the print was). */
  remainingPercent: number;
  /** Density added to this channel by stain, above the least stained channel (D = -log10 R). */
  stainDensity: number;
  confidence: number;
}

/** The estimator's own figures for one print, kept so that a batch can combine them later. */
export interface AgeingEstimate {
  /** Retention k and offset s per channel (red, green, blue), before the strength is applied. */
  k: Triplet;
  s: Triplet;
  /** Probability that the print has aged at all. */
  aged: number;
  /** Uncertainty of -ln k and of s (standard deviations). */
  spreadK: number;
  spreadS: number;
  /** How far -ln k may be from its truth (standard deviation), which weakens the strength; absent in analyses made before it existed. */
  sdK?: number;
  /** Stain measured on a found border, which the batch does not override. */
  borderStain: boolean;
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
  /** How far the dyes have faded (from `dyeLoss`). */
  fadeGrade: FadeGrade;
  /** How far the paper base has yellowed (from `stain`); absent in analyses made before it existed. */
  yellowingGrade?: FadeGrade;
  /** Largest dye loss of the proposed correction, 0..1 (ISO 18909 expresses fading as this loss). */
  dyeLoss: number;
  /** Yellowing of the paper base: blue stain density above the red. */
  stain: number;
  /** The print looks like a black-and-white print (only its base needs neutralising). */
  monochrome: boolean;
  /** Past the end points: the negative, if the family has it, holds more than this print. */
  rescanAdvised: boolean;
  proposed: Correction;
  /** 0..1: how far the estimate can be trusted on this print alone. */
  confidence: number;
  /** CIEDE2000 the proposed correction is expected to leave, from the estimate's own uncertainty. */
  expectedDeltaE00: number;
  /** The estimator's figures behind the proposal; absent in analyses made before it existed. */
  estimate?: AgeingEstimate;
  /** Set when {@link poolAnalyses} combined this print's estimate with its siblings'. */
  pooled?: { siblings: number; ownWeight: number };
  /** Where the border was found, as fractions of width/height cut from each side (0 = none). */
  border: { top: number; right: number; bottom: number; left: number };
}

/**
 * Grade thresholds, in one place.
 * - `none`: below what the engine can tell from scan noise and scene content (our own floor).
 * - `slight`: dye losses under about 15-20 % are rarely noticed (a film maker's published
 *   print-life note), so 15 %.
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

/** Grades the fading of a print's dyes from their largest loss (0..1); yellowing has a grade of its own. */
export function gradeFade(dyeLoss: number): FadeGrade {
  const t = FADE_GRADE_THRESHOLDS;
  if (dyeLoss < t.none.dyeLoss) return 'none';
  if (dyeLoss < t.slight.dyeLoss) return 'slight';
  if (dyeLoss < t.moderate.dyeLoss) return 'moderate';
  return 'severe';
}

/** Grades the yellowing of the paper base from its stain density (blue above red). */
export function gradeYellowing(stain: number): FadeGrade {
  const t = FADE_GRADE_THRESHOLDS;
  if (stain < t.none.stain) return 'none';
  if (stain < t.slight.stain) return 'slight';
  if (stain <= t.moderate.stain) return 'moderate';
  return 'severe';
}

/** Limits on what the engine will propose; beyond them it is guessing. */
const MIN_RETENTION = 0.3;
const MAX_RETENTION = 1.2;
const MIN_OFFSET = -0.2;
const MAX_OFFSET = 0.6;
/** Fresh paper's minimum density (about 0.1 from memory; a scanner calibrated to paper white reads less). */
const FRESH_PAPER_DENSITY = 0.04;
/** Densities of clipped blacks are unknown: features count them at this density. */
const DENSITY_CAP = 2.5;

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

/** Fractions of the picture's pixels at which each channel's density is read (0 = lightest). */
export const FEATURE_QUANTILES = [0.005, 0.02, 0.1, 0.25, 0.5, 0.75, 0.9, 0.98, 0.995] as const;
/** Length of the vector printFeatures returns. */
export const FEATURE_COUNT = 3 * FEATURE_QUANTILES.length + 6 + 4 + 4;

/** Pixels looked at, at most, for the colour statistics (every n-th pixel of a grid). */
const COLOUR_SAMPLES = 16000;

const densityCapped = (code: number) => Math.min(densityOf8[code], DENSITY_CAP);

/**
 * Densities of every `step`-th pixel of `r`, per channel, into dr/dg/db; returns how many.
 * A small function of its own so that V8 optimises its loop as soon as it runs hot.
 */
function sampleDensities(g: Grid, dr: Float32Array, dg: Float32Array, db: Float32Array): number {
  const { v, ch, w, x0, y0, x1, y1, step } = g;
  let m = 0;
  for (let y = y0; y < y1; y += step) {
    for (let x = x0; x < x1; x += step) {
      const i = (y * w + x) * ch;
      dr[m] = densityCapped(v[i]);
      dg[m] = densityCapped(v[i + 1]);
      db[m] = densityCapped(v[i + 2]);
      m++;
    }
  }
  return m;
}

function quantileSorted(sorted: Float32Array, p: number): number {
  if (sorted.length === 0) return 0;
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.round(p * (sorted.length - 1))))];
}

function median(values: number[]): number {
  if (values.length === 0) return 0;
  const s = values.slice().sort((a, b) => a - b);
  return s[s.length >> 1];
}

/** A scan's statistics as the estimator reads them, with the border found on the way. */
export interface PrintFeatures {
  /** FEATURE_COUNT numbers: per-channel density quantiles, colour statistics, the border. */
  features: number[];
  border: BorderFind | null;
  /** The spread of colour is that of a black-and-white print. */
  monochrome: boolean;
}

/**
 * Reads the statistics the estimator works from, on the picture inside a found border: each
 * channel's density at FEATURE_QUANTILES; the 10th, 50th and 90th percentiles of the red-green and
 * blue-green density differences; their medians in the lightest and the darkest 5 % of the
 * picture; and whether a border was found, with its density per channel.
 */
export function printFeatures(reduced: ReducedPixels): PrintFeatures {
  const { width: w, height: h } = reduced;
  if (reduced.channels < 3) throw new RangeError('analysePixels needs RGB pixels (expand greyscale first)');
  if (w < 1 || h < 1 || reduced.data.length < w * h * reduced.channels) throw new RangeError('pixel buffer smaller than width x height');
  const { v, ch } = to8(reduced);
  const border = w >= 32 && h >= 32 ? findBorder(v, ch, w, h) : null;
  const inner: Rect = border?.rect ?? { x0: 0, y0: 0, x1: w, y1: h };
  const features: number[] = [];

  const { h: hist, n } = histograms(v, ch, w, inner);
  for (let c = 0; c < 3; c++) for (const p of FEATURE_QUANTILES) features.push(densityCapped(percentileCode(hist[c], n, 1 - p)));

  const area = (inner.x1 - inner.x0) * (inner.y1 - inner.y0);
  const step = Math.max(1, Math.ceil(Math.sqrt(area / COLOUR_SAMPLES)));
  const cap = (Math.ceil((inner.x1 - inner.x0) / step) + 1) * (Math.ceil((inner.y1 - inner.y0) / step) + 1);
  const dr = new Float32Array(cap);
  const dg = new Float32Array(cap);
  const db = new Float32Array(cap);
  const m = sampleDensities({ v, ch, w, ...inner, step }, dr, dg, db);
  const rg = new Float32Array(m);
  const bg = new Float32Array(m);
  const sum = new Float32Array(m);
  for (let i = 0; i < m; i++) {
    rg[i] = dr[i] - dg[i];
    bg[i] = db[i] - dg[i];
    sum[i] = dr[i] + dg[i] + db[i];
  }
  const rgSorted = rg.slice().sort();
  const bgSorted = bg.slice().sort();
  for (const p of [0.1, 0.5, 0.9]) features.push(quantileSorted(rgSorted, p), quantileSorted(bgSorted, p));
  const sumSorted = sum.slice().sort();
  const light = quantileSorted(sumSorted, 0.05);
  const dark = quantileSorted(sumSorted, 0.95);
  const lightRg: number[] = [];
  const lightBg: number[] = [];
  const darkRg: number[] = [];
  const darkBg: number[] = [];
  for (let i = 0; i < m; i++) {
    if (sum[i] <= light) {
      lightRg.push(rg[i]);
      lightBg.push(bg[i]);
    } else if (sum[i] >= dark) {
      darkRg.push(rg[i]);
      darkBg.push(bg[i]);
    }
  }
  features.push(median(lightRg), median(lightBg), median(darkRg), median(darkBg));

  if (border) features.push(1, ...border.paper.map((c) => densityCapped(Math.round(c))));
  else features.push(0, 0, 0, 0);

  const spread = Math.max(quantileSorted(rgSorted, 0.9) - quantileSorted(rgSorted, 0.1), quantileSorted(bgSorted, 0.9) - quantileSorted(bgSorted, 0.1));
  return { features, border, monochrome: spread < 0.04 };
}

/** 0 up to `from`, 1 from `to`, smooth between. */
function smoothStep(x: number, from: number, to: number): number {
  if (x <= from) return 0;
  if (x >= to) return 1;
  const t = (x - from) / (to - from);
  return t * t * (3 - 2 * t);
}

/**
 * Strength of the correction for a probability of ageing (0 up to `from`, 1 from `to`, smooth
 * between), weakened where the estimate of k may be far off (`sdK`, the standard deviation of
 * -ln k): a confident correction of the wrong size does more harm than a weaker one.
 */
export function strengthFor(aged: number, decision: FittedPriors['decision'] = PRIORS.decision, sdK = 0): number {
  const sure = decision.unsureFrom !== undefined && decision.unsureTo !== undefined ? 1 - smoothStep(sdK, decision.unsureFrom, decision.unsureTo) : 1;
  return smoothStep(aged, decision.from, decision.to) * sure;
}

/** Stain only ever yellows: the offsets are made to rise from red to green to blue (pooling adjacent violators). */
function yellowingOnly(s: Triplet): Triplet {
  const out: Triplet = [...s];
  if (out[0] > out[1]) out[0] = out[1] = (out[0] + out[1]) / 2;
  if (out[1] > out[2]) {
    out[1] = out[2] = (out[1] + out[2]) / 2;
    if (out[0] > out[1]) out[0] = out[1] = out[2] = (out[0] + out[1] + out[2]) / 3;
  }
  return out;
}

/**
 * Builds the correction that undoes D' = k·D + s per channel at the given strength:
 * D = (D' - s) / k. In the correction's terms (correction.ts) that is a density gain of 1/k, a
 * white point at density s + Dt·k, brought to the reflectance 10^-Dt, where Dt is the least that
 * keeps every white point a reflectance (a scan lighter than the print gets Dt > 0).
 */
export function correctionFromAgeing(k: Triplet, s: Triplet, strength = 1): Correction {
  if (strength <= 0) return identityCorrection();
  const dt = Math.max(0, ...s.map((sc, c) => -sc / k[c]));
  const whitePoint = s.map((sc, c) => round(srgbEncode(reflectanceFromDensity(sc + dt * k[c])), 6)) as Triplet;
  return {
    version: CORRECTION_VERSION,
    whitePoint,
    curves: { red: { densityGain: round(1 / k[0], 5) }, green: { densityGain: round(1 / k[1], 5) }, blue: { densityGain: round(1 / k[2], 5) } },
    whiteTarget: round(Math.max(0.05, reflectanceFromDensity(dt)), 6),
    strength: round(Math.min(1, strength), 4),
  };
}

/** Fills in an Analysis from an estimate: the proposal at the strength its evidence allows, the grade, the paper base. */
function analysisFrom(
  est: AgeingEstimate,
  paperBase: Analysis['paperBase'] | null,
  border: Analysis['border'],
  monochrome: boolean,
  decision: FittedPriors['decision'] = PRIORS.decision,
): Analysis {
  const t = strengthFor(est.aged, decision, est.sdK);
  const proposed = correctionFromAgeing(est.k, est.s, t);
  // what the proposal does, strength included
  const kEff = est.k.map((k) => 1 / (1 + t * (1 / k - 1))) as Triplet;
  const dyeLoss = Math.max(0, 1 - Math.min(...kEff));
  const stainRel = est.s.map((s) => t * (s - Math.min(...est.s))) as Triplet;
  const yellowing = Math.max(0, stainRel[2] - stainRel[0]);
  const fadeGrade = gradeFade(dyeLoss);
  const expected = expectedError(est);
  const confidence = clamp(1 - expected / 8, 0, 1);
  const dyeConfidence = clamp(1 - est.spreadK / 0.15, 0, 1);
  const dye = (i: number): DyeEstimate => ({
    remainingPercent: round(kEff[i] * 100, 2),
    stainDensity: round(stainRel[i], 4),
    confidence: round(dyeConfidence, 3),
  });
  const paperDensity = est.s.map((s, c) => s + est.k[c] * FRESH_PAPER_DENSITY);
  const paper = paperBase ?? paperReport(paperDensity.map((d) => srgbEncode(reflectanceFromDensity(d)) * 255) as Triplet, 'highlight', round(clamp(1 - est.spreadS / 0.1, 0, 1), 3));
  return {
    paperBase: paper,
    dyes: { cyan: dye(0), magenta: dye(1), yellow: dye(2) },
    fadeGrade,
    yellowingGrade: gradeYellowing(yellowing),
    dyeLoss: round(dyeLoss, 4),
    stain: round(yellowing, 4),
    monochrome,
    rescanAdvised: fadeGrade === 'severe' && dyeLoss >= FADE_GRADE_THRESHOLDS.moderate.dyeLoss,
    proposed,
    confidence: round(confidence, 3),
    expectedDeltaE00: round(expected, 2),
    estimate: {
      k: est.k.map((k) => round(k, 5)) as Triplet,
      s: est.s.map((s) => round(s, 5)) as Triplet,
      aged: round(est.aged, 4),
      spreadK: round(est.spreadK, 5),
      spreadS: round(est.spreadS, 5),
      ...(est.sdK === undefined ? {} : { sdK: round(est.sdK, 5) }),
      borderStain: est.borderStain,
    },
    border,
  };
}

const NO_BORDER = { top: 0, right: 0, bottom: 0, left: 0 };

/** Measures paper base, dye retention, stain and grade of one print from a reduced copy of its scan. */
export function analysePixels(reduced: ReducedPixels): Analysis {
  const read = printFeatures(reduced);
  return analysisFromModel(estimateAgeing(read.features), read);
}

/**
 * The analysis that follows from the ensemble's estimate and what the scan showed: limits, a
 * black-and-white print's single image, the stain of a found border, yellowing only. (The fitting
 * script calls it too, with other decision rules, so that it tunes exactly what runs.)
 */
export function analysisFromModel(
  estimate: ModelEstimate | null,
  read: PrintFeatures,
  decision: FittedPriors['decision'] = PRIORS.decision,
  errorModel: FittedPriors['errorModel'] = PRIORS.errorModel,
): Analysis {
  const { border, monochrome } = read;
  const model: ModelEstimate = estimate ?? { k: [1, 1, 1], s: [0, 0, 0], aged: 0, spreadK: 1, spreadS: 1 };
  let k = model.k.map((x) => clamp(x, MIN_RETENTION, MAX_RETENTION)) as Triplet;
  // a black-and-white image has one silver or dye image for all three channels: only its base is coloured
  if (monochrome) k = [0, 0, 0].map(() => (k[0] + k[1] + k[2]) / 3) as Triplet;
  let s = model.s.map((x) => clamp(x, MIN_OFFSET, MAX_OFFSET)) as Triplet;
  let paperBase: Analysis['paperBase'] | null = null;
  if (border) {
    // the border is the paper base itself: its density now is the fresh paper's, faded by k, plus the stain
    const borderDensity = border.paper.map((c) => densityFromReflectance(srgbDecodeCode(c)));
    s = borderDensity.map((d, c) => clamp(d - k[c] * FRESH_PAPER_DENSITY, MIN_OFFSET, MAX_OFFSET)) as Triplet;
    paperBase = paperReport(border.paper, 'border', round(clamp(0.6 + (0.4 * (border.uniformity - 0.9)) / 0.1, 0, 1), 3));
  }
  s = yellowingOnly(s);
  return analysisFrom(
    {
      k,
      s,
      aged: model.aged,
      spreadK: model.spreadK,
      spreadS: border ? Math.min(model.spreadS, 0.005) : model.spreadS,
      sdK: Math.sqrt(estimateVariance(model, { errorModel }).k),
      borderStain: !!border,
    },
    paperBase,
    border?.cut ?? NO_BORDER,
    monochrome,
    decision,
  );
}

const LINEAR_OF_CODE = Float64Array.from({ length: 256 }, (_, i) => reflectanceFromDensity(densityOf8[i]));
/** Linear reflectance of a (possibly fractional) 8-bit code. */
function srgbDecodeCode(code: number): number {
  const lo = Math.max(0, Math.min(255, Math.floor(code)));
  const hi = Math.min(255, lo + 1);
  const f = code - lo;
  return LINEAR_OF_CODE[lo] * (1 - f) + LINEAR_OF_CODE[hi] * f;
}

/**
 * Batch-aware estimates: prints of one pack or drawer usually share paper, lab and storage, so
 * they aged alike. Each print's -ln k and s are combined with those of its siblings (weighted by
 * each estimate's certainty), allowing for the small differences between prints of one pack
 * (PRIORS.packJitter): a print moves toward the batch as far as its own estimate is unsure. A
 * stain measured on a print's own border stays its own. Analyses made before the estimator kept
 * its figures are returned as they are. The input is not modified.
 */
export function poolAnalyses(analyses: Analysis[]): Analysis[] {
  const withEstimate = analyses.filter((a) => a.estimate);
  if (withEstimate.length < 2) return analyses.slice();
  const jitter = PRIORS.packJitter;
  const varK = (a: Analysis) => estimateVariance(a.estimate!).k;
  const varS = (a: Analysis) => (a.estimate!.borderStain ? 0.005 ** 2 : estimateVariance(a.estimate!).s);
  const total = (f: (a: Analysis) => number) => withEstimate.reduce((acc, a) => acc + f(a), 0);
  const precisionK = total((a) => 1 / varK(a));
  const precisionS = total((a) => 1 / varS(a));
  const sumK = [0, 1, 2].map((c) => total((a) => -Math.log(a.estimate!.k[c]) / varK(a)));
  const sumS = [0, 1, 2].map((c) => total((a) => a.estimate!.s[c] / varS(a)));
  // whether the pack aged: the members' log-odds averaged and scaled by the square root of their
  // number, so that evidence adds up over prints that aged together but not as if each were
  // independent (our own choice between the two, checked on the lab's development packs)
  const logit = (p: number) => Math.log(clamp(p, 1e-4, 1 - 1e-4) / (1 - clamp(p, 1e-4, 1 - 1e-4)));
  const packLogit = (total((a) => logit(a.estimate!.aged)) / withEstimate.length) * Math.sqrt(withEstimate.length);
  const agedPack = 1 / (1 + Math.exp(-packLogit));
  return analyses.map((a) => {
    const e = a.estimate;
    if (!e) return a;
    // the siblings' combined estimate, without this print's own part in it
    const sibK = precisionK - 1 / varK(a);
    const sibS = precisionS - 1 / varS(a);
    const priorVarK = 1 / sibK + jitter.k ** 2;
    const priorVarS = 1 / sibS + jitter.s ** 2;
    const ownK = 1 / varK(a) / (1 / varK(a) + 1 / priorVarK);
    const ownS = e.borderStain ? 1 : 1 / varS(a) / (1 / varS(a) + 1 / priorVarS);
    const k = [0, 1, 2].map((c) => {
      const sib = (sumK[c] + Math.log(e.k[c]) / varK(a)) / sibK;
      return Math.exp(-(ownK * -Math.log(e.k[c]) + (1 - ownK) * sib));
    }) as Triplet;
    const s = [0, 1, 2].map((c) => {
      const sib = (sumS[c] - e.s[c] / varS(a)) / sibS;
      return ownS * e.s[c] + (1 - ownS) * sib;
    }) as Triplet;
    const next = analysisFrom(
      {
        k: a.monochrome ? ([0, 0, 0].map(() => (k[0] + k[1] + k[2]) / 3) as Triplet) : k,
        s: yellowingOnly(s),
        aged: agedPack,
        spreadK: Math.sqrt(1 / (1 / varK(a) + 1 / priorVarK)),
        sdK: Math.sqrt(1 / (1 / varK(a) + 1 / priorVarK)),
        spreadS: e.borderStain ? e.spreadS : Math.sqrt(1 / (1 / varS(a) + 1 / priorVarS)),
        borderStain: e.borderStain,
      },
      a.paperBase.method === 'border' ? a.paperBase : null,
      a.border,
      a.monochrome,
    );
    if (next.paperBase.method !== 'border') next.paperBase = { ...next.paperBase, method: 'pooled' };
    next.pooled = { siblings: withEstimate.length - 1, ownWeight: round(ownK, 3) };
    return next;
  });
}
