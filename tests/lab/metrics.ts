/**
 * The lab's own colour difference, written apart from the engine: 8-bit sRGB (IEC 61966-2-1:1999,
 * its 4-decimal matrix and the white of that matrix) -> CIELAB (CIE 15:2004) -> CIEDE2000 as written
 * up by Sharma, Wu & Dalal, Color Res. Appl. 30(1):21-30, 2005 (tests/unit/lab/metrics.test.ts
 * checks it against their Table 1).
 */
import { decode } from './simulator';

const M = [
  [0.4124, 0.3576, 0.1805],
  [0.2126, 0.7152, 0.0722],
  [0.0193, 0.1192, 0.9505],
];
const WHITE = M.map((row) => row[0] + row[1] + row[2]);
const LIN = Array.from({ length: 256 }, (_, i) => decode(i / 255));

function f(t: number): number {
  return t > 216 / 24389 ? Math.cbrt(t) : ((24389 / 27) * t + 16) / 116;
}

/** CIELAB of an 8-bit sRGB colour, into `out` at `o`. */
function labInto(r: number, g: number, b: number, out: Float64Array, o: number): void {
  const lr = LIN[r];
  const lg = LIN[g];
  const lb = LIN[b];
  const fx = f((M[0][0] * lr + M[0][1] * lg + M[0][2] * lb) / WHITE[0]);
  const fy = f((M[1][0] * lr + M[1][1] * lg + M[1][2] * lb) / WHITE[1]);
  const fz = f((M[2][0] * lr + M[2][1] * lg + M[2][2] * lb) / WHITE[2]);
  out[o] = 116 * fy - 16;
  out[o + 1] = 500 * (fx - fy);
  out[o + 2] = 200 * (fy - fz);
}

/** CIELAB of an 8-bit sRGB colour. */
export function labOf8(r: number, g: number, b: number): [number, number, number] {
  const out = new Float64Array(3);
  labInto(r, g, b, out, 0);
  return [out[0], out[1], out[2]];
}

/** CIELAB of an image at the given pixel indices (3 values a point). */
export function labAt(img: Uint8Array, points: Int32Array): Float64Array {
  const out = new Float64Array(points.length * 3);
  for (let k = 0; k < points.length; k++) {
    const i = points[k] * 3;
    labInto(img[i], img[i + 1], img[i + 2], out, k * 3);
  }
  return out;
}

const RAD = Math.PI / 180;

/** CIEDE2000 (kL = kC = kH = 1). */
export function ciede2000(l1: ArrayLike<number>, l2: ArrayLike<number>, o1 = 0, o2 = 0): number {
  const L1 = l1[o1];
  const a1 = l1[o1 + 1];
  const b1 = l1[o1 + 2];
  const L2 = l2[o2];
  const a2 = l2[o2 + 1];
  const b2 = l2[o2 + 2];
  const C1 = Math.hypot(a1, b1);
  const C2 = Math.hypot(a2, b2);
  const Cm = (C1 + C2) / 2;
  const G = 0.5 * (1 - Math.sqrt(Cm ** 7 / (Cm ** 7 + 25 ** 7)));
  const ap1 = (1 + G) * a1;
  const ap2 = (1 + G) * a2;
  const Cp1 = Math.hypot(ap1, b1);
  const Cp2 = Math.hypot(ap2, b2);
  const hue = (b: number, a: number) => {
    if (a === 0 && b === 0) return 0;
    const h = Math.atan2(b, a) / RAD;
    return h < 0 ? h + 360 : h;
  };
  const hp1 = hue(b1, ap1);
  const hp2 = hue(b2, ap2);
  const dL = L2 - L1;
  const dC = Cp2 - Cp1;
  let dh = 0;
  if (Cp1 * Cp2 !== 0) {
    dh = hp2 - hp1;
    if (dh > 180) dh -= 360;
    else if (dh < -180) dh += 360;
  }
  const dH = 2 * Math.sqrt(Cp1 * Cp2) * Math.sin((dh / 2) * RAD);
  const Lm = (L1 + L2) / 2;
  const Cpm = (Cp1 + Cp2) / 2;
  let hm = hp1 + hp2;
  if (Cp1 * Cp2 !== 0) {
    if (Math.abs(hp1 - hp2) <= 180) hm = (hp1 + hp2) / 2;
    else hm = hp1 + hp2 < 360 ? (hp1 + hp2 + 360) / 2 : (hp1 + hp2 - 360) / 2;
  }
  const T = 1 - 0.17 * Math.cos((hm - 30) * RAD) + 0.24 * Math.cos(2 * hm * RAD) + 0.32 * Math.cos((3 * hm + 6) * RAD) - 0.2 * Math.cos((4 * hm - 63) * RAD);
  const dTheta = 30 * Math.exp(-(((hm - 275) / 25) ** 2));
  const Rc = 2 * Math.sqrt(Cpm ** 7 / (Cpm ** 7 + 25 ** 7));
  const Sl = 1 + (0.015 * (Lm - 50) ** 2) / Math.sqrt(20 + (Lm - 50) ** 2);
  const Sc = 1 + 0.045 * Cpm;
  const Sh = 1 + 0.015 * Cpm * T;
  const Rt = -Math.sin(2 * dTheta * RAD) * Rc;
  return Math.sqrt((dL / Sl) ** 2 + (dC / Sc) ** 2 + (dH / Sh) ** 2 + Rt * (dC / Sc) * (dH / Sh));
}

/** Pixel indices of a region, every `step`-th pixel across and down: the sample every figure is measured on. */
export function samplePoints(width: number, r: { x0: number; y0: number; x1: number; y1: number }, step: number): Int32Array {
  const out: number[] = [];
  for (let y = r.y0 + (step >> 1); y < r.y1; y += step) for (let x = r.x0 + (step >> 1); x < r.x1; x += step) out.push(y * width + x);
  return Int32Array.from(out);
}

/** Mean CIEDE2000 between an 8-bit RGB image and reference Lab values (from {@link labAt}) at the given pixel indices. */
export function meanDeltaE00(a: Uint8Array, refLab: Float64Array, points: Int32Array): number {
  const lab = labAt(a, points);
  let sum = 0;
  for (let k = 0; k < points.length; k++) sum += ciede2000(lab, refLab, k * 3, k * 3);
  return sum / Math.max(1, points.length);
}

/** Spearman rank correlation. */
export function rankCorrelation(a: number[], b: number[]): number {
  const rank = (xs: number[]) => {
    const idx = xs.map((_, i) => i).sort((i, j) => xs[i] - xs[j]);
    const r = new Array<number>(xs.length);
    idx.forEach((i, k) => (r[i] = k));
    return r;
  };
  const ra = rank(a);
  const rb = rank(b);
  const ma = (ra.length - 1) / 2;
  const mb = ma;
  let num = 0;
  let da = 0;
  let db = 0;
  for (let i = 0; i < ra.length; i++) {
    num += (ra[i] - ma) * (rb[i] - mb);
    da += (ra[i] - ma) ** 2;
    db += (rb[i] - mb) ** 2;
  }
  return num / Math.sqrt(da * db);
}
