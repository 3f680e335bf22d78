/**
 * Synthetic print scenes for the demo, tests and benchmarks: invented content (sky, foliage, a
 * skin-toned face, saturated patches, a grey step wedge, optionally a white border), aged with
 * a density model D' = k·D + s and encoded as JPEG, PNG or TIFF at any size by the image module.
 * Everything is deterministic for a given seed.
 *
 * @example
 *   const fresh = generateScene({ width: 600, height: 400, border: true, seed: 7 });
 *   const faded = agePixels(fresh, AGEING_MODELS.darkStorage(1));
 *   const jpeg = await encodeScene(faded, { format: 'jpeg', quality: 92 });
 */
import { encodePixels, type EncodeOptions } from '../restoration/imaging.ts';

export type { EncodeOptions } from '../restoration/imaging.ts';

type Triplet = [number, number, number];

/** Interleaved 8-bit sRGB pixels, three channels. */
export interface ScenePixels {
  data: Uint8Array;
  width: number;
  height: number;
  channels: 3;
}

export interface SceneOptions {
  width: number;
  height: number;
  /** Seed of the texture noise; same seed, same scene. Default 1. */
  seed?: number;
  /** Surround the picture with a white paper border (about 4.5 % of the short side). */
  border?: boolean;
  /** A black-and-white print: every pixel neutral. */
  monochrome?: boolean;
  /**
   * Grain and scanner noise, as a standard deviation in density (default 0.01; 0 for none).
   * Real scans carry it, and it is what makes JPEG files of them large and slow to code.
   */
  grain?: number;
}

/** Per-channel ageing D' = k·D + s, channels red, green, blue (governed by cyan, magenta, yellow dye). */
export interface Ageing {
  /** k: fraction of each dye's density left, 0..1. */
  retention: Triplet;
  /** s: density added by stain to each channel. */
  stain: Triplet;
}

/**
 * Ageing models for the demo, each scaled by a severity 0..1 (1 = a badly aged print).
 * Invented for the demo, shaped by conservation guides (common practice): in the dark cyan fades fastest and the base yellows
 * (stain mostly blue, up to about 0.2-0.3); in light magenta and yellow fade; black-and-white
 * prints only yellow. The best-kept dye still loses a little, as real prints do.
 */
export const AGEING_MODELS = {
  none: (): Ageing => ({ retention: [1, 1, 1], stain: [0, 0, 0] }),
  darkStorage: (severity: number): Ageing => ({
    retention: [1 - 0.45 * severity, 1 - 0.02 * severity, 1 - 0.15 * severity],
    stain: [0.01 * severity, 0.05 * severity, 0.22 * severity],
  }),
  lightFaded: (severity: number): Ageing => ({
    retention: [1 - 0.02 * severity, 1 - 0.45 * severity, 1 - 0.25 * severity],
    stain: [0, 0.02 * severity, 0.08 * severity],
  }),
  yellowedMonochrome: (severity: number): Ageing => ({
    retention: [1, 1, 1],
    stain: [0.01 * severity, 0.07 * severity, 0.25 * severity],
  }),
} as const;

/** Density limits of the invented print: a fresh paper base and a glossy print's maximum (about 2.0-2.5, from memory). */
const PAPER_DENSITY = 0.04;
const MAX_DENSITY = 2.1;

const decode = (v: number) => (v <= 0.04045 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4));
const encode = (l: number) => (l <= 0.0031308 ? 12.92 * l : 1.055 * Math.pow(l, 1 / 2.4) - 0.055);

/** mulberry32: small, fast, seedable. */
function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Smooth value noise on a coarse grid, sampled at (u, v) in 0..1. */
function valueNoise(seed: number, cells: number): (u: number, v: number) => number {
  const r = rng(seed);
  const g = new Float32Array((cells + 1) * (cells + 1));
  for (let i = 0; i < g.length; i++) g[i] = r();
  return (u, v) => {
    const x = Math.min(u, 0.999999) * cells;
    const y = Math.min(v, 0.999999) * cells;
    const xi = Math.floor(x);
    const yi = Math.floor(y);
    const fx = x - xi;
    const fy = y - yi;
    const sx = fx * fx * (3 - 2 * fx);
    const sy = fy * fy * (3 - 2 * fy);
    const i = yi * (cells + 1) + xi;
    const a = g[i] + (g[i + 1] - g[i]) * sx;
    const b = g[i + cells + 1] + (g[i + cells + 2] - g[i + cells + 1]) * sx;
    return a + (b - a) * sy;
  };
}

const lerp3 = (a: Triplet, b: Triplet, t: number): Triplet => [a[0] + (b[0] - a[0]) * t, a[1] + (b[1] - a[1]) * t, a[2] + (b[2] - a[2]) * t];

const PATCHES: Triplet[] = [
  [180, 30, 35],
  [40, 140, 50],
  [35, 45, 140],
  [20, 140, 170],
  [175, 45, 130],
  [235, 200, 20],
];

/** Linear-light colour of the invented scene at (u, v) of the picture area. */
function sceneColour(u: number, v: number, n1: (u: number, v: number) => number, n2: (u: number, v: number) => number): Triplet {
  // grey step wedge, 11 steps from 0.05 to 2.05 density
  if (v > 0.88 && v < 0.97 && u > 0.05 && u < 0.95) {
    const step = Math.min(10, Math.floor(((u - 0.05) / 0.9) * 11));
    const r = Math.pow(10, -(0.05 + 0.2 * step));
    return [r, r, r];
  }
  if (v > 0.76 && v < 0.86 && u > 0.52 && u < 0.98) {
    const p = PATCHES[Math.min(5, Math.floor(((u - 0.52) / 0.46) * 6))];
    return [decode(p[0] / 255), decode(p[1] / 255), decode(p[2] / 255)];
  }
  const fu = (u - 0.3) / 0.11;
  const fv = (v - 0.5) / 0.19;
  const face = fu * fu + fv * fv;
  if (face < 1) {
    const hair = v < 0.5 - 0.19 * 0.55 * Math.sqrt(Math.max(0, 1 - fu * fu));
    const shade = 0.75 + 0.35 * (1 - face) - 0.15 * fu;
    const base: Triplet = hair ? [45, 32, 26] : [205, 152, 126];
    return [decode(base[0] / 255) * shade, decode(base[1] / 255) * shade, decode(base[2] / 255) * shade];
  }
  let c: Triplet;
  if (v < 0.45) {
    const sky = lerp3([60, 105, 170], [185, 208, 232], v / 0.45);
    const cloud = Math.max(0, n1(u, v) - 0.6) * 2.2;
    c = lerp3(sky, [248, 248, 250], Math.min(1, cloud));
  } else {
    const t = n1(u, v) * 0.7 + n2(u, v) * 0.3;
    c = t < 0.35 ? lerp3([12, 22, 10], [45, 80, 35], t / 0.35) : lerp3([45, 80, 35], [120, 160, 70], (t - 0.35) / 0.65);
  }
  return [decode(c[0] / 255), decode(c[1] / 255), decode(c[2] / 255)];
}

/** Table from density (0..2.5 in 1/2000 steps) to 8-bit sRGB code, so the per-pixel loop stays cheap. */
const DENSITY_STEPS = 2000;
const densityToCode = (() => {
  const t = new Uint8Array(Math.ceil(2.5 * DENSITY_STEPS) + 1);
  for (let i = 0; i < t.length; i++) t[i] = Math.round(encode(Math.pow(10, -i / DENSITY_STEPS)) * 255);
  return t;
})();

/** Reflectance factor of a density offset. */
function grainFactor(d: number): number {
  return Math.pow(10, -d);
}

function codeOf(linear: number): number {
  const d = Math.min(Math.max(-Math.log10(Math.max(linear, 1e-6)), PAPER_DENSITY), MAX_DENSITY);
  return densityToCode[Math.round(d * DENSITY_STEPS)];
}

/**
 * Renders an unaged scene: what the print looked like new, scanned. Densities stay within a
 * print's range (paper base 0.04, maximum 2.1), as a real print's would.
 */
export function generateScene(options: SceneOptions): ScenePixels {
  const { width, height } = options;
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1) throw new RangeError('width and height must be positive integers');
  const seed = options.seed ?? 1;
  const n1 = valueNoise(seed, 12);
  const n2 = valueNoise(seed + 101, 48);
  const data = new Uint8Array(width * height * 3);
  const bw = options.border ? Math.round(0.045 * Math.min(width, height)) : 0;
  const pw = Math.max(1, width - 2 * bw);
  const ph = Math.max(1, height - 2 * bw);
  const paper = densityToCode[Math.round(PAPER_DENSITY * DENSITY_STEPS)];
  const grain = options.grain ?? 0.01;
  const noise = rng(seed * 7919 + 17);
  // sum of three uniforms: cheap, bell-shaped, variance 1/4 -> scale to unit variance
  const gauss = () => (noise() + noise() + noise() - 1.5) * 2;
  for (let y = 0; y < height; y++) {
    const v = (y - bw + 0.5) / ph;
    for (let x = 0; x < width; x++) {
      const i = (y * width + x) * 3;
      const u = (x - bw + 0.5) / pw;
      if (u < 0 || u > 1 || v < 0 || v > 1) {
        data[i] = data[i + 1] = data[i + 2] = paper;
        continue;
      }
      const c = sceneColour(u, v, n1, n2);
      if (options.monochrome) {
        const yl = 0.2126 * c[0] + 0.7152 * c[1] + 0.0722 * c[2];
        data[i] = data[i + 1] = data[i + 2] = codeOf(yl * grainFactor(grain * gauss()));
      } else {
        // dye clouds: partly shared between layers, partly each layer's own
        const common = grain * 0.7 * gauss();
        data[i] = codeOf(c[0] * grainFactor(common + grain * 0.7 * gauss()));
        data[i + 1] = codeOf(c[1] * grainFactor(common + grain * 0.7 * gauss()));
        data[i + 2] = codeOf(c[2] * grainFactor(common + grain * 0.7 * gauss()));
      }
    }
  }
  return { data, width, height, channels: 3 };
}

/** Ages a scene by D' = k·D + s per channel (exact per code value, so done by table). */
export function agePixels(scene: ScenePixels, ageing: Ageing): ScenePixels {
  const luts = [0, 1, 2].map((c) => {
    const t = new Uint8Array(256);
    for (let i = 0; i < 256; i++) {
      const d = -Math.log10(Math.max(decode(i / 255), 1e-6));
      const aged = ageing.retention[c] * d + ageing.stain[c];
      t[i] = Math.round(Math.min(1, Math.max(0, encode(Math.pow(10, -aged)))) * 255);
    }
    return t;
  });
  const out = new Uint8Array(scene.data.length);
  const [r, g, b] = luts;
  for (let i = 0; i < out.length; i += 3) {
    out[i] = r[scene.data[i]];
    out[i + 1] = g[scene.data[i + 1]];
    out[i + 2] = b[scene.data[i + 2]];
  }
  return { ...scene, data: out };
}

/** Encodes scene pixels as a scan file. */
export function encodeScene(pixels: ScenePixels, options: EncodeOptions): Promise<Buffer> {
  return encodePixels(pixels, options);
}

/** One call for a whole synthetic scan: scene, optional ageing, encoding. */
export async function syntheticScan(options: SceneOptions & { ageing?: Ageing } & Partial<EncodeOptions>): Promise<Buffer> {
  const scene = generateScene(options);
  const pixels = options.ageing ? agePixels(scene, options.ageing) : scene;
  return encodeScene(pixels, { format: options.format ?? 'jpeg', quality: options.quality, sixteenBit: options.sixteenBit, progressive: options.progressive, greyscale: options.greyscale });
}
