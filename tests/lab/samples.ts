/**
 * Training prints for `npm run fit-priors`: the development photographs, cropped, varied and aged
 * many times by the lab's simulator, scanned through JPEG, and read with the engine's own features.
 * Generating them is the slow part of a fit, so it is shared out over child processes (one per
 * core) and kept in the lab's cache, keyed by everything that decides the samples.
 *
 * Variation of the scene (before ageing) stands in for photographs the lab does not have:
 *  - crops from a third of the frame's side to all of it, so one photograph gives many compositions
 *    (a crop of sky, a crop of foliage) with statistics of their own;
 *  - a camera white balance, exposure and colourfulness of their own, in linear light, so that a
 *    scene's own cast is not learned as ageing (an unfaded sunset stays a sunset).
 * The truth to learn is, per channel, the straight-line fit D' = k·D + s between the fresh and the
 * aged print's densities (the best the engine's correction can undo), and whether it aged at all.
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { cpus } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';
import { printFeatures, type PrintFeatures } from '../../src/lib/restoration/analysis';
import { labOf8 } from './metrics';
import { labCache, loadPhoto, photosOf, type Photo, type PhotoSource } from './photos';
import { agePhoto, decode, drawAgeing, encode, rng, type Ageing, type AgeingMode } from './simulator';

/** Long side of the photographs the training prints are made from. */
export const FIT_SIDE = 384;
/** Picture points kept per sample to measure a correction's error. */
export const POINTS = 300;
/** Bump when the way samples are made changes, so the cache is not reused. */
const SAMPLE_RECIPE = 2;

export interface Sample {
  /** Index of the development photograph. */
  photo: number;
  read: PrintFeatures;
  /** -ln k (3), s (3). */
  target: number[];
  aged: boolean;
  /** Fresh Lab and scanned RGB at POINTS picture pixels. */
  freshLab: Float64Array;
  scanRgb: Uint8Array;
}

export interface SampleOptions {
  perPhoto: number;
  /** Vary the scene (crops down to a third of the side, white balance, exposure, colourfulness). */
  vary: boolean;
  /** Seed of the whole set. */
  seed: number;
}

const uniform = (r: () => number, a: number, b: number) => a + (b - a) * r();
function gauss(r: () => number): number {
  return Math.sqrt(-2 * Math.log(Math.max(r(), 1e-12))) * Math.cos(2 * Math.PI * r());
}

/** A random crop of a photograph, each side between `minSide` and all of the frame. */
export function crop(photo: Photo, r: () => number, minSide: number): Photo {
  const fw = uniform(r, minSide, 1);
  const fh = Math.min(1, Math.max(minSide, fw * uniform(r, 0.75, 1.33)));
  const w = Math.max(32, Math.round(photo.width * fw));
  const h = Math.max(32, Math.round(photo.height * fh));
  const x0 = Math.floor(r() * (photo.width - w + 1));
  const y0 = Math.floor(r() * (photo.height - h + 1));
  const data = new Uint8Array(w * h * 3);
  for (let y = 0; y < h; y++) data.set(photo.data.subarray(((y0 + y) * photo.width + x0) * 3, ((y0 + y) * photo.width + x0 + w) * 3), y * w * 3);
  return { id: photo.id, width: w, height: h, data };
}

const LINEAR = Float64Array.from({ length: 256 }, (_, i) => decode(i / 255));

/**
 * Another camera's rendering of the same scene: white balance (per-channel gain), exposure and
 * colourfulness, applied in linear light. Spreads are our own choice (a few percent of gain, a third
 * of a stop): the kind of variation between cameras and labs, not an ageing.
 */
export function varyScene(photo: Photo, r: () => number): Photo {
  const exposure = Math.exp(0.25 * gauss(r));
  const gains = [0, 1, 2].map(() => exposure * Math.exp(0.07 * gauss(r)));
  const colourful = Math.exp(0.2 * gauss(r));
  const out = new Uint8Array(photo.data.length);
  for (let i = 0; i < out.length; i += 3) {
    const c = [0, 1, 2].map((k) => LINEAR[photo.data[i + k]] * gains[k]);
    const y = 0.2126 * c[0] + 0.7152 * c[1] + 0.0722 * c[2];
    for (let k = 0; k < 3; k++) {
      const v = y + colourful * (c[k] - y);
      out[i + k] = Math.round(encode(Math.min(1, Math.max(0, v))) * 255);
    }
  }
  return { ...photo, data: out };
}

const densityOfCode = Float64Array.from({ length: 256 }, (_, i) => -Math.log10(Math.max(decode(i / 255), 1e-6)));

/** Least-squares D' = k·D + s per channel over the picture, leaving out clipped pixels. */
export function fitLine(fresh: Uint8Array, scan: Uint8Array, width: number, inner: { x0: number; y0: number; x1: number; y1: number }): number[] {
  const out: number[] = [];
  const ks: number[] = [];
  for (let c = 0; c < 3; c++) {
    let n = 0;
    let sx = 0;
    let sy = 0;
    let sxx = 0;
    let sxy = 0;
    for (let y = inner.y0; y < inner.y1; y += 2) {
      for (let x = inner.x0; x < inner.x1; x += 2) {
        const i = (y * width + x) * 3 + c;
        if (fresh[i] < 4 || scan[i] < 3 || scan[i] > 253) continue;
        const X = densityOfCode[fresh[i]];
        const Y = densityOfCode[scan[i]];
        n++;
        sx += X;
        sy += Y;
        sxx += X * X;
        sxy += X * Y;
      }
    }
    const k = n > 10 ? (n * sxy - sx * sy) / Math.max(1e-9, n * sxx - sx * sx) : 1;
    const kc = Math.min(1.3, Math.max(0.25, k));
    ks.push(-Math.log(kc));
    out.push(n > 10 ? (sy - kc * sx) / n : 0);
  }
  return [...ks, ...out];
}

/** Ages one scene, scans it through JPEG and reads it. */
export async function makeSample(photo: Photo, index: number, a: Ageing, seed: number, r: () => number): Promise<Sample> {
  const print = agePhoto(photo, a, seed);
  const { data } = await sharp(Buffer.from(print.aged.buffer, print.aged.byteOffset, print.aged.length), { raw: { width: print.width, height: print.height, channels: 3 } })
    .jpeg({ quality: a.jpegQuality })
    .raw()
    .toBuffer({ resolveWithObject: true });
  const scan = new Uint8Array(data.buffer, data.byteOffset, data.length);
  const read = printFeatures({ data: scan, width: print.width, height: print.height, channels: 3, depth: 8 });
  const freshLab = new Float64Array(POINTS * 3);
  const scanRgb = new Uint8Array(POINTS * 3);
  const { x0, y0, x1, y1 } = print.inner;
  for (let p = 0; p < POINTS; p++) {
    const i = ((y0 + Math.floor(r() * (y1 - y0))) * print.width + x0 + Math.floor(r() * (x1 - x0))) * 3;
    freshLab.set(labOf8(print.fresh[i], print.fresh[i + 1], print.fresh[i + 2]), p * 3);
    scanRgb.set(scan.subarray(i, i + 3), p * 3);
  }
  return { photo: index, read, target: fitLine(print.fresh, scan, print.width, print.inner), aged: a.mode !== 'none', freshLab, scanRgb };
}

/** The mix of ageings a training set covers: a quarter unfaded. */
export function modeFor(r: () => number, mono: boolean): AgeingMode {
  const x = r();
  if (mono) return x < 0.3 ? 'none' : 'monochrome';
  if (x < 0.25) return 'none';
  if (x < 0.55) return 'dark';
  if (x < 0.7) return 'light';
  if (x < 0.9) return 'mixed';
  return 'monochrome';
}

/** The samples of one development photograph (the same for the same options, whichever process makes them). */
async function samplesOfPhoto(p: number, o: SampleOptions): Promise<Sample[]> {
  const dev = photosOf('dev');
  const photo = await loadPhoto(dev[p], FIT_SIDE);
  const r = rng(o.seed + p * 31337);
  const mono = dev[p].category === 'monochrome';
  const out: Sample[] = [];
  for (let j = 0; j < o.perPhoto; j++) {
    const a = drawAgeing(r, modeFor(r, mono));
    let scene = crop(photo, r, o.vary ? 0.35 : 0.6);
    if (o.vary && r() < 0.7) scene = varyScene(scene, r);
    out.push(await makeSample(scene, p, a, Math.floor(r() * 2 ** 31), r));
  }
  return out;
}

interface Stored {
  photo: number;
  read: PrintFeatures;
  target: number[];
  aged: boolean;
  freshLab: number[];
  scanRgb: number[];
}
const toStored = (s: Sample): Stored => ({ ...s, freshLab: Array.from(s.freshLab, (v) => Math.round(v * 1000) / 1000), scanRgb: Array.from(s.scanRgb) });
const fromStored = (s: Stored): Sample => ({ ...s, freshLab: Float64Array.from(s.freshLab), scanRgb: Uint8Array.from(s.scanRgb) });

const HERE = fileURLToPath(import.meta.url);

/** Runs this file as a child process that makes the samples of the given photographs. */
function shard(photos: number[], o: SampleOptions): Promise<void> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', HERE, JSON.stringify({ photos, o })], { stdio: ['ignore', 'inherit', 'inherit'] });
    child.on('error', reject);
    child.on('exit', (code) => (code === 0 ? resolve() : reject(new Error(`sample shard exited with ${code}`))));
  });
}

/** Samples are made and cached in chunks of this many per photograph, each chunk with a seed of its own. */
const CHUNK = 150;

/**
 * Every sample of the development photographs for these options, from the cache or made now. A set
 * of N per photograph is its chunks of CHUNK, seeded seed, seed + 1e6, …, so a larger set reuses a
 * smaller one's samples. Each photograph's chunk is cached on its own, so adding a photograph to the
 * development part makes only its samples.
 */
export async function trainingSamples(o: SampleOptions, log: (line: string) => void = () => {}): Promise<Sample[]> {
  const out: Sample[] = [];
  for (let done = 0, chunk = 0; done < o.perPhoto; done += CHUNK, chunk++) {
    out.push(...(await chunkSamples({ ...o, perPhoto: Math.min(CHUNK, o.perPhoto - done), seed: o.seed + chunk * 1_000_000 }, log)));
  }
  return out;
}

/** The cache file of one development photograph's chunk. */
function chunkFile(photo: PhotoSource, o: SampleOptions): string {
  const dir = join(labCache(), 'samples');
  mkdirSync(dir, { recursive: true });
  return join(dir, `r${SAMPLE_RECIPE}-${photo.id}-n${o.perPhoto}-${o.vary ? 'varied' : 'plain'}-s${o.seed}.json`);
}

async function chunkSamples(o: SampleOptions, log: (line: string) => void): Promise<Sample[]> {
  const dev = photosOf('dev');
  const missing = dev.map((_, p) => p).filter((p) => !existsSync(chunkFile(dev[p], o)));
  if (missing.length) {
    const workers = Math.max(1, Math.min(cpus().length, missing.length));
    const parts = Array.from({ length: workers }, (_, w) => missing.filter((_, i) => i % workers === w));
    const started = Date.now();
    await Promise.all(parts.map((photos) => shard(photos, o)));
    log(`  samples of ${missing.length} photographs made in ${((Date.now() - started) / 1000).toFixed(0)} s over ${workers} processes`);
  } else {
    log(`  samples of seed ${o.seed} from the cache`);
  }
  // the photograph's index is its place in today's list (the cached index may be of an older list)
  return dev.flatMap((photo, p) => (JSON.parse(readFileSync(chunkFile(photo, o), 'utf8')) as Stored[]).map((s) => fromStored({ ...s, photo: p })));
}

if (process.argv[1] === HERE && process.argv[2]) {
  const { photos, o } = JSON.parse(process.argv[2]) as { photos: number[]; o: SampleOptions };
  for (const p of photos) {
    const photo = photosOf('dev')[p];
    const file = chunkFile(photo, o);
    writeFileSync(`${file}.part`, JSON.stringify((await samplesOfPhoto(p, o)).map(toStored)));
    renameSync(`${file}.part`, file);
    process.stderr.write(`  ${photo.id}: ${o.perPhoto} samples\n`);
  }
}
