/**
 * The accuracy lab's ageing simulator. It is written apart from the estimator and imports nothing
 * from src/lib/restoration, and it is broader than the correction the engine proposes:
 *  - dark (thermal) ageing as a change of slope per dye, cyan usually fastest, and light fading as a
 *    near-parallel loss of density, magenta usually fastest: "Chromogenic dyes lost density uniformly
 *    across their full tonal scale, resulting in a more or less parallel shift (light fade) or linear
 *    slope change (thermal aging)" (M. McCormick-Goodhart & H. Wilhelm, 2003);
 *  - a density dependence of the loss (a slight curvature, our own assumption);
 *  - crosstalk: one layer's loss depends on the densities of the others (Ando et al., J. Imaging Sci.
 *    Technol. 41(3):259-265, 1997, light fading of chromogenic dyes);
 *  - yellow-brown stain that raises blue density most, uneven toward the edges in some prints (the
 *    0.1-0.3 rise in blue minimum density after decades is a value from memory);
 *  - scanner gain, gamma and noise; JPEG q85-95 (done by the caller);
 *  - with and without a white border; black-and-white prints on a yellowed base;
 *  - packs of prints that aged together, each with a small jitter.
 * Channels: red, green and blue of the scan are governed by the cyan, magenta and yellow dyes.
 * Density is reflection density, D = -log10(reflectance) (ISO 5).
 */

/** sRGB decode, IEC 61966-2-1:1999. */
export function decode(v: number): number {
  return v <= 0.04045 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4);
}
/** sRGB encode, IEC 61966-2-1:1999. */
export function encode(l: number): number {
  return l <= 0.0031308 ? 12.92 * l : 1.055 * Math.pow(l, 1 / 2.4) - 0.055;
}

/** A seeded random source (mulberry32), so every case is the same from run to run. */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

const uniform = (r: () => number, a: number, b: number) => a + (b - a) * r();
function gauss(r: () => number): number {
  const u = Math.max(r(), 1e-12);
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * r());
}

export type AgeingMode = 'none' | 'dark' | 'light' | 'mixed' | 'monochrome';

/** Everything that happened to one print, drawn at random (seeded). */
export interface Ageing {
  mode: AgeingMode;
  /** Paper minimum density of the fresh print, neutral. */
  dmin: number;
  /** Slope change of dark ageing per dye (cyan, magenta, yellow), 1 = none. */
  slope: [number, number, number];
  /** Curvature of dark ageing: the loss grows (positive) or shrinks with density. */
  curvature: [number, number, number];
  /** Near-parallel density loss of light fading per dye. */
  parallel: [number, number, number];
  /** Crosstalk: the loss of a layer grows with the density of the other two by this factor. */
  crosstalk: number;
  /** Stain density added per channel at the centre. */
  stain: [number, number, number];
  /** How much heavier the stain is at the edges (0 = even). */
  edgeStain: number;
  /** Scanner: reflectance gain per channel, and a gamma on the encoded values. */
  gain: [number, number, number];
  gamma: number;
  /** Noise, in 8-bit codes (standard deviation). */
  noise: number;
  jpegQuality: number;
  /** Width of a white border as a fraction of the short side (0 = borderless). */
  border: number;
}

const D_CAP = 2.4; // fresh glossy paper reaches about 2.0-2.5 maximum density (from memory)

/** A random ageing of the given mode; `severity` 0..1 scales how far it went. */
export function drawAgeing(r: () => number, mode: AgeingMode, opts: { border?: boolean } = {}): Ageing {
  const severity = uniform(r, 0.2, 1);
  const a: Ageing = {
    mode,
    dmin: uniform(r, 0.02, 0.07),
    slope: [1, 1, 1],
    curvature: [0, 0, 0],
    parallel: [0, 0, 0],
    crosstalk: 0,
    stain: [0, 0, 0],
    edgeStain: 0,
    gain: [1, 1, 1],
    gamma: 1,
    noise: uniform(r, 0.3, 1.5),
    jpegQuality: Math.round(uniform(r, 85, 95)),
    border: (opts.border ?? r() < 0.5) ? uniform(r, 0.03, 0.07) : 0,
  };
  const overall = uniform(r, 0.97, 1.03);
  a.gain = [0, 1, 2].map(() => overall * (1 + 0.015 * gauss(r))) as [number, number, number];
  a.gamma = uniform(r, 0.95, 1.05);
  if (mode === 'none') return a;
  const blueStain = severity * uniform(r, 0.03, 0.3);
  a.stain = [blueStain * uniform(r, 0, 0.25), blueStain * uniform(r, 0.25, 0.6), blueStain];
  a.edgeStain = r() < 0.4 ? uniform(r, 0.2, 0.8) : 0;
  if (mode === 'monochrome') return a;
  if (mode === 'dark' || mode === 'mixed') {
    // cyan usually fastest in the dark; sometimes yellow or magenta keep less
    const cyan = 1 - severity * uniform(r, 0.15, 0.55);
    const magenta = Math.min(1, cyan + severity * uniform(r, 0.0, 0.35));
    const yellow = Math.min(1, cyan + severity * uniform(r, -0.08, 0.3));
    a.slope = [cyan, magenta, yellow];
    a.curvature = [0, 1, 2].map(() => uniform(r, -0.08, 0.08)) as [number, number, number];
  }
  if (mode === 'light' || mode === 'mixed') {
    const scale = mode === 'mixed' ? 0.5 : 1;
    a.parallel = [severity * scale * uniform(r, 0, 0.15), severity * scale * uniform(r, 0.08, 0.4), severity * scale * uniform(r, 0.03, 0.3)];
    a.crosstalk = uniform(r, 0, 0.3);
  }
  return a;
}

/** A pack's members: the shared ageing with a small jitter per print (and its own scanner noise and border). */
export function jitterAgeing(r: () => number, base: Ageing, amount = 0.05): Ageing {
  const j = (x: number) => x * (1 + amount * gauss(r));
  return {
    ...base,
    slope: base.slope.map((k) => Math.min(1, 1 - j(1 - k))) as [number, number, number],
    parallel: base.parallel.map(j) as [number, number, number],
    stain: base.stain.map((s) => Math.max(0, j(s))) as [number, number, number],
    noise: uniform(r, 0.3, 1.5),
    jpegQuality: Math.round(uniform(r, 85, 95)),
  };
}

/** Dye density left of a fresh density `d` (above the paper) in one layer. */
function dyeAfter(a: Ageing, c: number, d: number, others: number): number {
  let out = d;
  if (a.slope[c] !== 1) out = d * a.slope[c] * (1 + a.curvature[c] * (d - 1));
  if (a.parallel[c] !== 0) out -= a.parallel[c] * (1 - Math.exp(-d / 0.25));
  if (a.crosstalk !== 0) {
    const loss = (d - out) * Math.min(1.6, Math.max(0.4, 1 + a.crosstalk * (others - d)));
    out = d - loss;
  }
  return out < 0 ? 0 : out;
}

/** Dye density of each 8-bit sRGB code of a photograph, capped so that with the paper it stays under the paper's maximum. */
const DYE_OF_CODE = Float64Array.from({ length: 256 }, (_, code) => -Math.log10(Math.max(decode(code / 255), 1e-6)));
function freshDensity(code: number, dmin: number): number {
  return Math.min(DYE_OF_CODE[code], D_CAP - dmin) + dmin;
}

export interface Print {
  width: number;
  height: number;
  /** The fresh print as a scanner would see it: the reference a restoration aims for. */
  fresh: Uint8Array;
  /** The aged print as scanned (before JPEG). */
  aged: Uint8Array;
  /** The picture area inside the border. */
  inner: { x0: number; y0: number; x1: number; y1: number };
}

/** Edge factor: 1 at the print's edge, falling to 0 at 15 % of the short side inward. */
function edgeFactor(x: number, y: number, w: number, h: number): number {
  const d = Math.min(x, y, w - 1 - x, h - 1 - y) / (0.15 * Math.min(w, h));
  return d >= 1 ? 0 : (1 - d) * (1 - d);
}

/**
 * Makes the fresh and the aged print of a photograph. A border adds paper around the picture; a
 * black-and-white ageing turns the photograph grey first.
 */
export function agePhoto(photo: { width: number; height: number; data: Uint8Array }, a: Ageing, seed: number): Print {
  const r = rng(seed);
  const b = Math.round(a.border * Math.min(photo.width, photo.height));
  const w = photo.width + 2 * b;
  const h = photo.height + 2 * b;
  const fresh = new Uint8Array(w * h * 3);
  const aged = new Uint8Array(w * h * 3);
  const mono = a.mode === 'monochrome';
  const toScan = (D: number, c: number) => {
    const v = encode(Math.min(1, Math.pow(10, -D) * a.gain[c]));
    return Math.pow(v, a.gamma);
  };
  const d = [0, 0, 0];
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const o = (y * w + x) * 3;
      const inPicture = x >= b && y >= b && x < w - b && y < h - b;
      if (inPicture) {
        const i = ((y - b) * photo.width + (x - b)) * 3;
        if (mono) {
          const lum = 0.2126 * decode(photo.data[i] / 255) + 0.7152 * decode(photo.data[i + 1] / 255) + 0.0722 * decode(photo.data[i + 2] / 255);
          const code = Math.round(encode(lum) * 255);
          d[0] = d[1] = d[2] = freshDensity(code, a.dmin);
        } else {
          for (let c = 0; c < 3; c++) d[c] = freshDensity(photo.data[i + c], a.dmin);
        }
      } else {
        d[0] = d[1] = d[2] = a.dmin;
      }
      for (let c = 0; c < 3; c++) fresh[o + c] = Math.round(encode(Math.pow(10, -d[c])) * 255);
      const edge = a.edgeStain > 0 ? 1 + a.edgeStain * edgeFactor(x, y, w, h) : 1;
      for (let c = 0; c < 3; c++) {
        const dye = d[c] - a.dmin;
        const others = (d[0] + d[1] + d[2] - d[c]) / 2 - a.dmin;
        const D = a.dmin + dyeAfter(a, c, dye, others) + a.stain[c] * edge;
        const v = toScan(D, c) * 255 + a.noise * gauss(r);
        aged[o + c] = v < 0 ? 0 : v > 255 ? 255 : Math.round(v);
      }
    }
  }
  return { width: w, height: h, fresh, aged, inner: { x0: b, y0: b, x1: w - b, y1: h - b } };
}

/**
 * The floor: the exact inverse of this ageing with its true parameters, applied to a scanned pixel
 * (noise and JPEG cannot be undone, and clipped values stay clipped). Crosstalk couples the layers,
 * so the three are solved together by a few fixed-point steps.
 */
export function exactInverse(a: Ageing, rgb: [number, number, number], x: number, y: number, w: number, h: number): [number, number, number] {
  const edge = a.edgeStain > 0 ? 1 + a.edgeStain * edgeFactor(x, y, w, h) : 1;
  const target = [0, 1, 2].map((c) => {
    const v = Math.pow(Math.max(rgb[c], 0.5) / 255, 1 / a.gamma);
    const R = decode(v) / a.gain[c];
    return -Math.log10(Math.max(R, 1e-6)) - a.dmin - a.stain[c] * edge;
  });
  const dye = target.map((t, c) => Math.max(0, t / Math.max(a.slope[c], 0.05)));
  for (let step = 0; step < 8; step++) {
    for (let c = 0; c < 3; c++) {
      const others = (dye[0] + dye[1] + dye[2] - dye[c]) / 2;
      const now = dyeAfter(a, c, dye[c], others);
      const h2 = 1e-3;
      const slope = (dyeAfter(a, c, dye[c] + h2, others) - now) / h2;
      dye[c] = Math.max(0, dye[c] + (target[c] - now) / Math.max(slope, 0.05));
    }
  }
  return dye.map((v) => Math.round(encode(Math.pow(10, -(v + a.dmin))) * 255)) as [number, number, number];
}
