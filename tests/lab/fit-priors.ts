/**
 * `npm run fit-priors`: fits the estimator's numbers (src/lib/restoration/priors.ts) on the
 * development photographs of the lab only, never on the validation part.
 *  1. Ages every development photograph many times with the lab's simulator (random crops,
 *     every mode, with and without a border, a quarter left unfaded), scans it through JPEG, and
 *     reads the engine's own features of the scan (printFeatures).
 *  2. The truth to learn is, per channel, the straight-line fit D' = k·D + s between the fresh and
 *     the aged print's densities (the best the engine's correction can undo), and whether it aged.
 *  3. Fits five networks, each with a different fifth of the photographs held out; predictions on
 *     held-out photographs tune the decision rule (how sure before correcting, so that unfaded prints
 *     stay as they are) and calibrate the expected error against the members' disagreement.
 *  4. Measures how far prints of one simulated pack differ (the pooling's jitter).
 * Options: `--per-photo N` (default 200), `--quick` (fewer samples and epochs, for a trial).
 */
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';
import { analysisFromModel, printFeatures, type PrintFeatures } from '../../src/lib/restoration/analysis';
import { applyCorrection, buildChannelLuts } from '../../src/lib/restoration/correction';
import { estimateAgeing, type FittedPriors, type NetworkWeights } from '../../src/lib/restoration/print-model';
import { ciede2000, labOf8 } from './metrics';
import { train, type TrainingSet } from './mlp';
import { loadPhoto, photosOf, type Photo } from './photos';
import { agePhoto, decode, drawAgeing, jitterAgeing, rng, type Ageing, type AgeingMode } from './simulator';

const FIT_SIDE = 384;
const POINTS = 300;
const FOLDS = 5;

function arg(name: string): string | undefined {
  const i = process.argv.indexOf(`--${name}`);
  return i >= 0 ? process.argv[i + 1] : undefined;
}
const quick = process.argv.includes('--quick');
const perPhoto = Number(arg('per-photo') ?? (quick ? 60 : 200));

interface Sample {
  photo: number;
  features: number[];
  read: PrintFeatures;
  /** -ln k (3), s (3). */
  target: number[];
  aged: boolean;
  /** Fresh Lab and scanned RGB at a few hundred picture pixels, to measure a correction's error. */
  freshLab: Float64Array;
  scanRgb: Uint8Array;
}

function crop(photo: Photo, r: () => number): Photo {
  const fw = 0.6 + 0.4 * r();
  const fh = 0.6 + 0.4 * r();
  const w = Math.max(32, Math.round(photo.width * fw));
  const h = Math.max(32, Math.round(photo.height * fh));
  const x0 = Math.floor(r() * (photo.width - w + 1));
  const y0 = Math.floor(r() * (photo.height - h + 1));
  const data = new Uint8Array(w * h * 3);
  for (let y = 0; y < h; y++) data.set(photo.data.subarray(((y0 + y) * photo.width + x0) * 3, ((y0 + y) * photo.width + x0 + w) * 3), y * w * 3);
  return { id: photo.id, width: w, height: h, data };
}

const densityOfCode = Float64Array.from({ length: 256 }, (_, i) => -Math.log10(Math.max(decode(i / 255), 1e-6)));

/** Least-squares D' = k·D + s per channel over the picture, leaving out clipped pixels. */
function fitLine(fresh: Uint8Array, scan: Uint8Array, width: number, inner: { x0: number; y0: number; x1: number; y1: number }): number[] {
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

async function makeSample(photo: Photo, index: number, a: Ageing, seed: number, r: () => number): Promise<Sample> {
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
  return { photo: index, features: read.features, read, target: fitLine(print.fresh, scan, print.width, print.inner), aged: a.mode !== 'none', freshLab, scanRgb };
}

function modeFor(r: () => number, mono: boolean): AgeingMode {
  const x = r();
  if (mono) return x < 0.3 ? 'none' : 'monochrome';
  if (x < 0.25) return 'none';
  if (x < 0.55) return 'dark';
  if (x < 0.7) return 'light';
  if (x < 0.9) return 'mixed';
  return 'monochrome';
}

/** Mean CIEDE2000 of a sample's points after the correction an analysis proposes. */
function sampleError(s: Sample, correction: Parameters<typeof buildChannelLuts>[0], againstScan: boolean): number {
  const out = applyCorrection(s.scanRgb, 3, buildChannelLuts(correction, 8)) as Uint8Array;
  let sum = 0;
  for (let p = 0; p < POINTS; p++) {
    const ref = againstScan ? labOf8(s.scanRgb[p * 3], s.scanRgb[p * 3 + 1], s.scanRgb[p * 3 + 2]) : s.freshLab.subarray(p * 3, p * 3 + 3);
    sum += ciede2000(labOf8(out[p * 3], out[p * 3 + 1], out[p * 3 + 2]), ref);
  }
  return sum / POINTS;
}

function meanStd(rows: number[][]): { mean: number[]; std: number[] } {
  const d = rows[0].length;
  const mean = new Array<number>(d).fill(0);
  const std = new Array<number>(d).fill(0);
  for (const r of rows) for (let j = 0; j < d; j++) mean[j] += r[j] / rows.length;
  for (const r of rows) for (let j = 0; j < d; j++) std[j] += (r[j] - mean[j]) ** 2 / rows.length;
  return { mean, std: std.map((v) => Math.max(Math.sqrt(v), 1e-3)) };
}

/** Solves the least-squares fit y ≈ X·b (normal equations, small systems). */
function leastSquares(X: number[][], y: number[]): number[] {
  const d = X[0].length;
  const A = Array.from({ length: d }, () => new Array<number>(d + 1).fill(0));
  X.forEach((row, i) => {
    for (let a = 0; a < d; a++) {
      for (let b = 0; b < d; b++) A[a][b] += row[a] * row[b];
      A[a][d] += row[a] * y[i];
    }
  });
  for (let a = 0; a < d; a++) A[a][a] += 1e-6;
  for (let c = 0; c < d; c++) {
    let p = c;
    for (let r = c + 1; r < d; r++) if (Math.abs(A[r][c]) > Math.abs(A[p][c])) p = r;
    [A[c], A[p]] = [A[p], A[c]];
    for (let r = 0; r < d; r++) {
      if (r === c) continue;
      const f = A[r][c] / A[c][c];
      for (let k = c; k <= d; k++) A[r][k] -= f * A[c][k];
    }
  }
  return A.map((row, i) => row[d] / row[i]);
}

async function main(): Promise<void> {
  const started = Date.now();
  const dev = photosOf('dev');
  const photos = await Promise.all(dev.map((p) => loadPhoto(p, FIT_SIDE)));
  const samples: Sample[] = [];
  for (let p = 0; p < photos.length; p++) {
    const r = rng(7_000_000 + p * 31337);
    const mono = dev[p].category === 'monochrome';
    for (let j = 0; j < perPhoto; j++) {
      const a = drawAgeing(r, modeFor(r, mono));
      samples.push(await makeSample(crop(photos[p], r), p, a, Math.floor(r() * 2 ** 31), r));
    }
    process.stderr.write(`  ${dev[p].id}: ${perPhoto} samples (${((Date.now() - started) / 1000).toFixed(0)} s)\n`);
  }

  const fx = meanStd(samples.map((s) => s.features));
  const ty = meanStd(samples.map((s) => s.target));
  const toSet = (list: Sample[]): TrainingSet => ({
    x: list.map((s) => Float64Array.from(s.features, (v, j) => (v - fx.mean[j]) / fx.std[j])),
    y: list.map((s) => Float64Array.from([...s.target.map((v, j) => (v - ty.mean[j]) / ty.std[j]), s.aged ? 1 : 0])),
  });
  const foldOf = (photo: number) => photo % FOLDS;
  const members: NetworkWeights[] = [];
  for (let f = 0; f < FOLDS; f++) {
    members.push(train(toSet(samples.filter((s) => foldOf(s.photo) !== f)), { hidden: [32, 32], epochs: quick ? 25 : 60, batch: 32, rate: 0.003, decay: 1e-4, labelWeight: 0.5, seed: 11 + f }));
    process.stderr.write(`  network ${f + 1} of ${FOLDS} fitted (${((Date.now() - started) / 1000).toFixed(0)} s)\n`);
  }
  const priors: FittedPriors = {
    provenance: '',
    featureMean: fx.mean,
    featureStd: fx.std,
    targetMean: ty.mean,
    targetStd: ty.std,
    members,
    decision: { from: 0.5, to: 0.8 },
    calibration: { intercept: 0, perSpreadK: 0, perSpreadS: 0, perDoubt: 0 },
    packJitter: { k: 0.05, s: 0.02 },
  };

  // held-out estimates: each sample by the network that did not see its photograph, with the ensemble's spread
  const heldOut = samples.map((s) => {
    const own = estimateAgeing(s.features, { ...priors, members: [members[foldOf(s.photo)]] })!;
    const all = estimateAgeing(s.features, priors)!;
    return { ...own, spreadK: all.spreadK, spreadS: all.spreadS };
  });

  // the decision rule: the least faded error that keeps unfaded prints within 0.5 ΔE00 of their scan
  let best = { from: 0.5, to: 0.8, faded: Infinity, unfaded: Infinity };
  for (const from of [0.3, 0.4, 0.5, 0.6, 0.7, 0.8]) {
    for (const width of [0.05, 0.1, 0.2, 0.3]) {
      const decision = { from, to: Math.min(0.99, from + width) };
      let faded = 0;
      let nf = 0;
      let unfaded = 0;
      let nu = 0;
      samples.forEach((s, i) => {
        const proposal = analysisFromModel(heldOut[i], s.read, decision).proposed;
        if (s.aged) {
          faded += sampleError(s, proposal, false);
          nf++;
        } else {
          unfaded += sampleError(s, proposal, true);
          nu++;
        }
      });
      const score = { ...decision, faded: faded / nf, unfaded: unfaded / nu };
      process.stderr.write(`  decision ${decision.from}-${decision.to}: faded ${score.faded.toFixed(2)}, unfaded ${score.unfaded.toFixed(2)}\n`);
      if (score.unfaded <= 0.5 && score.faded < best.faded) best = score;
    }
  }
  priors.decision = { from: best.from, to: best.to };

  // expected error: the held-out error of each aged sample against the members' disagreement
  const rows: number[][] = [];
  const errs: number[] = [];
  samples.forEach((s, i) => {
    if (!s.aged) return;
    const e = heldOut[i];
    rows.push([1, e.spreadK, e.spreadS, 1 - Math.abs(2 * e.aged - 1)]);
    errs.push(sampleError(s, analysisFromModel(e, s.read, priors.decision).proposed, false));
  });
  const [intercept, perSpreadK, perSpreadS, perDoubt] = leastSquares(rows, errs);
  priors.calibration = { intercept, perSpreadK: Math.max(0, perSpreadK), perSpreadS: Math.max(0, perSpreadS), perDoubt: Math.max(0, perDoubt) };

  // how far the prints of one pack differ: simulated packs of the same ageing with the lab's jitter
  const spreadsK: number[] = [];
  const spreadsS: number[] = [];
  const r = rng(424242);
  for (let n = 0; n < (quick ? 4 : 12); n++) {
    const base = drawAgeing(r, (['dark', 'light', 'mixed'] as const)[n % 3]);
    const targets: number[][] = [];
    for (let m = 0; m < 6; m++) {
      const p = Math.floor(r() * photos.length);
      targets.push((await makeSample(crop(photos[p], r), p, jitterAgeing(r, base), Math.floor(r() * 2 ** 31), r)).target);
    }
    const ms = meanStd(targets);
    spreadsK.push((ms.std[0] + ms.std[1] + ms.std[2]) / 3);
    spreadsS.push((ms.std[3] + ms.std[4] + ms.std[5]) / 3);
  }
  const avg = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
  priors.packJitter = { k: Math.max(0.01, avg(spreadsK)), s: Math.max(0.005, avg(spreadsS)) };
  priors.provenance = `fitted by npm run fit-priors on ${samples.length} simulated prints of the ${dev.length} development photographs of tests/lab/photos.ts (${perPhoto} each${quick ? ', quick' : ''}), ${new Date().toISOString().slice(0, 10)}`;

  const round = (x: number) => Math.round(x * 1e6) / 1e6;
  const file = fileURLToPath(new URL('../../src/lib/restoration/priors.ts', import.meta.url));
  const body = JSON.stringify({ ...priors, featureMean: priors.featureMean.map(round), featureStd: priors.featureStd.map(round), targetMean: priors.targetMean.map(round), targetStd: priors.targetStd.map(round) });
  writeFileSync(
    file,
    `// Written by \`npm run fit-priors\` (tests/lab/fit-priors.ts): do not edit by hand.\nimport type { FittedPriors } from './print-model';\n\n/** The estimator's fitted numbers. */\nexport const PRIORS: FittedPriors = ${body};\n`,
  );
  console.log(`decision: ${priors.decision.from}-${priors.decision.to} (held-out faded ${best.faded.toFixed(2)}, unfaded change ${best.unfaded.toFixed(2)})`);
  console.log(`calibration: ${JSON.stringify(priors.calibration)}`);
  console.log(`pack_jitter: ${JSON.stringify(priors.packJitter)}`);
  console.log(`samples: ${samples.length}`);
  console.log(`fit_seconds: ${((Date.now() - started) / 1000).toFixed(0)}`);
}

main().catch((err) => {
  console.error(err);
  process.exit(1);
});
