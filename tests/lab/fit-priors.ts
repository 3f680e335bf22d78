/**
 * `npm run fit-priors`: fits the estimator's numbers (src/lib/restoration/priors.ts) on the
 * development photographs of the lab only, never on the validation part.
 *  1. Training prints (samples.ts): every development photograph cropped, given another camera's
 *     white balance, exposure and colourfulness, aged by the lab's simulator (every mode, with and
 *     without a border, a quarter left unfaded), scanned through JPEG and read with the engine's own
 *     features; made over one process per core and kept in the lab's cache.
 *  2. The truth to learn is, per channel, the straight-line fit D' = k·D + s between the fresh and
 *     the aged print's densities (the best the engine's correction can undo), and whether it aged.
 *  3. Fits ten networks, two with each fifth of the photographs held out; predictions on
 *     held-out photographs tune the decision rule (how sure before correcting, so that unfaded prints
 *     stay as they are), calibrate the expected error, and measure how far an estimate is from its
 *     truth (the variance the batch pooling weighs prints by).
 *  4. Measures how far prints of one simulated pack differ (the pooling's jitter).
 * Options: `--per-photo N` (default 300), `--plain` (crops only, no change of camera), `--quick`
 * (fewer samples and epochs, for a trial), `--hidden 32,32` (the networks' hidden layers) and
 * `--decay 0.01` (their weight decay), `--per-fold 2` (networks fitted per fold, each with its own seed),
 * `--keep-networks` (keep the networks of today's priors and fit only what follows them: the
 * decision rule, the expected error, the error model and the pack jitter).
 */
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { analysisFromModel, strengthFor } from '../../src/lib/restoration/analysis';
import { applyCorrection, buildChannelLuts, identityCorrection } from '../../src/lib/restoration/correction';
import { estimateAgeing, estimateVariance, expectedError, uncertaintyTerms, type FittedPriors, type NetworkWeights } from '../../src/lib/restoration/print-model';
import { PRIORS } from '../../src/lib/restoration/priors';
import { ciede2000, labOf8, rankCorrelation } from './metrics';
import { train, type TrainingSet } from './mlp';
import { loadPhoto, photosOf } from './photos';
import { crop, FIT_SIDE, makeSample, POINTS, trainingSamples, type Sample } from './samples';
import { drawAgeing, jitterAgeing, rng } from './simulator';

const FOLDS = 5;
/**
 * The decision rule keeps the mean change to held-out unfaded prints within this (ΔE00). Leaving an
 * unfaded print alone comes first: on the development part 0.8 bought 0.1 less error on faded
 * prints for twice the change to unfaded ones.
 */
const UNFADED_LIMIT = 0.4;

function arg(name: string): string | undefined {
  const i = process.argv.indexOf(`--${name}`);
  return i >= 0 ? process.argv[i + 1] : undefined;
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

export interface FitOptions {
  hidden: number[];
  epochs: number;
  decay: number;
  labelWeight: number;
  /** Networks per fold (each with a seed of its own); the members' mean is the estimate. */
  perFold?: number;
}

/** The ensemble fitted on samples: member f never saw the photographs of fold f. */
export function fitEnsemble(samples: Sample[], o: FitOptions, log: (line: string) => void = () => {}): FittedPriors {
  const fx = meanStd(samples.map((s) => s.read.features));
  const ty = meanStd(samples.map((s) => s.target));
  const toSet = (list: Sample[]): TrainingSet => ({
    x: list.map((s) => Float64Array.from(s.read.features, (v, j) => (v - fx.mean[j]) / fx.std[j])),
    y: list.map((s) => Float64Array.from([...s.target.map((v, j) => (v - ty.mean[j]) / ty.std[j]), s.aged ? 1 : 0])),
  });
  const members: NetworkWeights[] = [];
  const perFold = o.perFold ?? 1;
  for (let f = 0; f < FOLDS; f++) {
    const set = toSet(samples.filter((s) => foldOf(s.photo) !== f));
    for (let j = 0; j < perFold; j++) {
      members.push(train(set, { hidden: o.hidden, epochs: o.epochs, batch: 32, rate: 0.003, decay: o.decay, labelWeight: o.labelWeight, seed: 11 + f + 100 * j }));
      log(`  network ${members.length} of ${FOLDS * perFold} fitted`);
    }
  }
  return {
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
}

export const foldOf = (photo: number) => photo % FOLDS;

/** Each sample's estimate by the member that did not see its photograph, with the whole ensemble's spread. */
export function heldOutEstimates(priors: FittedPriors, samples: Sample[]): NonNullable<ReturnType<typeof estimateAgeing>>[] {
  return samples.map((s) => {
    // members are fold by fold, the same number for each fold
    const perFold = priors.members.length / FOLDS;
    const own = estimateAgeing(s.read.features, { ...priors, members: priors.members.slice(foldOf(s.photo) * perFold, (foldOf(s.photo) + 1) * perFold) })!;
    const all = estimateAgeing(s.read.features, priors)!;
    return { ...own, spreadK: all.spreadK, spreadS: all.spreadS };
  });
}

/**
 * Held-out mean error of faded samples (to the fresh print) and unfaded ones (change from the scan)
 * under a decision rule. A decision only sets each proposal's strength, so the proposal is made
 * once at full strength and its errors are kept per strength (to 0.01), for the next rule tried.
 */
export function heldOutScore(
  samples: Sample[],
  heldOut: ReturnType<typeof heldOutEstimates>,
  decision: FittedPriors['decision'],
  memo = new Map<string, number>(),
  sdK: number[] = [],
): { faded: number; unfaded: number } {
  let faded = 0;
  let nf = 0;
  let unfaded = 0;
  let nu = 0;
  samples.forEach((s, i) => {
    const t = Math.round(strengthFor(heldOut[i].aged, decision, sdK[i] ?? 0) * 100) / 100;
    const key = `${i}:${t}`;
    let e = memo.get(key);
    if (e === undefined) {
      const full = analysisFromModel(heldOut[i], s.read, { from: 0, to: 1e-9 }).proposed;
      e = sampleError(s, t > 0 ? { ...full, strength: t } : identityCorrection(), !s.aged);
      memo.set(key, e);
    }
    if (s.aged) {
      faded += e;
      nf++;
    } else {
      unfaded += e;
      nu++;
    }
  });
  return { faded: faded / nf, unfaded: unfaded / nu };
}

/** How far each held-out estimate's -ln k may be from its truth (standard deviation), by the fitted error model. */
export function heldOutSdK(heldOut: ReturnType<typeof heldOutEstimates>, errorModel: NonNullable<FittedPriors['errorModel']>): number[] {
  return heldOut.map((e) => Math.sqrt(estimateVariance(e, { errorModel }).k));
}

/** Weakening rules tried: none, or full strength up to one standard deviation of -ln k and none from another. */
const UNSURE_RULES: { unsureFrom?: number; unsureTo?: number }[] = [
  {},
  ...[0.12, 0.15, 0.2, 0.25, 0.3].flatMap((unsureFrom) => [0.05, 0.1, 0.2].map((w) => ({ unsureFrom, unsureTo: Math.round((unsureFrom + w) * 100) / 100 }))),
];

/**
 * The decision rule: the least faded error that keeps unfaded prints within `limit` ΔE00 of their
 * scan (or, failing that, the least unfaded change), over thresholds on the probability of ageing
 * and, when `sdK` is given, weakening rules on how unsure the estimate of k is.
 */
export function chooseDecision(
  samples: Sample[],
  heldOut: ReturnType<typeof heldOutEstimates>,
  limit = 0.5,
  log: (line: string) => void = () => {},
  sdK?: number[],
): FittedPriors['decision'] & { faded: number; unfaded: number } {
  const memo = new Map<string, number>();
  let best: (FittedPriors['decision'] & { faded: number; unfaded: number }) | null = null;
  let safest: (FittedPriors['decision'] & { faded: number; unfaded: number }) | null = null;
  for (const unsure of sdK ? UNSURE_RULES : [{}]) {
    for (const from of [0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9]) {
      for (const width of [0.05, 0.1, 0.2, 0.3]) {
        const decision = { from, to: Math.round(Math.min(0.99, from + width) * 100) / 100, ...unsure };
        const score = { ...decision, ...heldOutScore(samples, heldOut, decision, memo, sdK) };
        log(`  decision ${JSON.stringify(decision)}: faded ${score.faded.toFixed(3)}, unfaded ${score.unfaded.toFixed(3)}`);
        if (score.unfaded <= limit && (!best || score.faded < best.faded)) best = score;
        if (!safest || score.unfaded < safest.unfaded) safest = score;
      }
    }
  }
  return best ?? safest!;
}

/** Variance of the held-out estimates around their truth, as c0 + c1 · spread² (for pooling). */
export function fitErrorModel(samples: Sample[], heldOut: ReturnType<typeof heldOutEstimates>): NonNullable<FittedPriors['errorModel']> {
  const rowsK: number[][] = [];
  const rowsS: number[][] = [];
  const errK: number[] = [];
  const errS: number[] = [];
  samples.forEach((s, i) => {
    if (!s.aged) return;
    const e = heldOut[i];
    let k = 0;
    let st = 0;
    for (let c = 0; c < 3; c++) {
      k += (-Math.log(e.k[c]) - s.target[c]) ** 2 / 3;
      st += (e.s[c] - s.target[c + 3]) ** 2 / 3;
    }
    rowsK.push([1, e.spreadK ** 2]);
    errK.push(k);
    rowsS.push([1, e.spreadS ** 2]);
    errS.push(st);
  });
  const fit = (rows: number[][], y: number[]): [number, number] => {
    const [c0, c1] = leastSquares(rows, y);
    if (c1 >= 0) return [Math.max(c0, 0), c1];
    return [y.reduce((a, b) => a + b, 0) / y.length, 0];
  };
  return { k: fit(rowsK, errK), s: fit(rowsS, errS) };
}

async function main(): Promise<void> {
  const started = Date.now();
  const log = (line: string) => process.stderr.write(`${line} (${((Date.now() - started) / 1000).toFixed(0)} s)\n`);
  const quick = process.argv.includes('--quick');
  const perPhoto = Number(arg('per-photo') ?? (quick ? 60 : 300));
  const vary = !process.argv.includes('--plain');
  const dev = photosOf('dev');
  const samples = await trainingSamples({ perPhoto, vary, seed: 8_000_000 }, log);
  const options: FitOptions = {
    hidden: (arg('hidden') ?? '32,32').split(',').map(Number),
    epochs: quick ? 25 : 60,
    decay: Number(arg('decay') ?? 0.01),
    labelWeight: 0.5,
    perFold: Number(arg('per-fold') ?? 2),
  };
  // --keep-networks: the networks of today's priors.ts, with everything after them fitted again
  const priors = process.argv.includes('--keep-networks') ? { ...PRIORS, members: [...PRIORS.members] } : fitEnsemble(samples, options, log);
  const heldOut = heldOutEstimates(priors, samples);
  priors.errorModel = fitErrorModel(samples, heldOut);
  const best = chooseDecision(samples, heldOut, UNFADED_LIMIT, log, heldOutSdK(heldOut, priors.errorModel));
  const { faded: _faded, unfaded: _unfaded, ...decision } = best;
  priors.decision = decision;

  // expected error: the held-out error of each aged sample against the members' disagreement
  const rows: number[][] = [];
  const errs: number[] = [];
  samples.forEach((s, i) => {
    if (!s.aged) return;
    const e = heldOut[i];
    const t = uncertaintyTerms(e);
    rows.push([1, t.spreadK, t.spreadS, t.doubt, t.size]);
    errs.push(sampleError(s, analysisFromModel(e, s.read, priors.decision, priors.errorModel).proposed, false));
  });
  const [intercept, perSpreadK, perSpreadS, perDoubt, perSize] = leastSquares(rows, errs);
  priors.calibration = { intercept, perSpreadK: Math.max(0, perSpreadK), perSpreadS: Math.max(0, perSpreadS), perDoubt: Math.max(0, perDoubt), perSize: Math.max(0, perSize) };
  const rankCorr = rankCorrelation(samples.flatMap((s, i) => (s.aged ? [expectedError(heldOut[i], priors)] : [])), errs);

  // how far the prints of one pack differ: simulated packs of the same ageing with the lab's jitter
  const spreadsK: number[] = [];
  const spreadsS: number[] = [];
  const r = rng(424242);
  const photos = await Promise.all(dev.map((p) => loadPhoto(p, FIT_SIDE)));
  for (let n = 0; n < (quick ? 4 : 12); n++) {
    const base = drawAgeing(r, (['dark', 'light', 'mixed'] as const)[n % 3]);
    const targets: number[][] = [];
    for (let m = 0; m < 6; m++) {
      const p = Math.floor(r() * photos.length);
      targets.push((await makeSample(crop(photos[p], r, 0.6), p, jitterAgeing(r, base), Math.floor(r() * 2 ** 31), r)).target);
    }
    const ms = meanStd(targets);
    spreadsK.push((ms.std[0] + ms.std[1] + ms.std[2]) / 3);
    spreadsS.push((ms.std[3] + ms.std[4] + ms.std[5]) / 3);
  }
  const avg = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;
  priors.packJitter = { k: Math.max(0.01, avg(spreadsK)), s: Math.max(0.005, avg(spreadsS)) };
  const today = new Date().toISOString().slice(0, 10);
  if (process.argv.includes('--keep-networks')) priors.provenance = `${PRIORS.provenance.replace(/; what follows the networks fitted again .*$/, '')}; what follows the networks fitted again ${today}`;
  else priors.provenance = `fitted by npm run fit-priors on ${samples.length} simulated prints of the ${dev.length} development photographs of tests/lab/photos.ts (${perPhoto} each, ${vary ? 'scenes varied' : 'plain crops'}${quick ? ', quick' : ''}), ${today}`;

  const round = (x: number) => Math.round(x * 1e6) / 1e6;
  const file = fileURLToPath(new URL('../../src/lib/restoration/priors.ts', import.meta.url));
  const body = JSON.stringify({ ...priors, featureMean: priors.featureMean.map(round), featureStd: priors.featureStd.map(round), targetMean: priors.targetMean.map(round), targetStd: priors.targetStd.map(round) });
  writeFileSync(
    file,
    `// Written by \`npm run fit-priors\` (tests/lab/fit-priors.ts): do not edit by hand.\nimport type { FittedPriors } from './print-model';\n\n/** The estimator's fitted numbers. */\nexport const PRIORS: FittedPriors = ${body};\n`,
  );
  console.log(`decision: ${JSON.stringify(priors.decision)} (held-out faded ${best.faded.toFixed(2)}, unfaded change ${best.unfaded.toFixed(2)})`);
  console.log(`calibration: ${JSON.stringify(priors.calibration)}`);
  console.log(`held_out_uncertainty_rank_corr: ${rankCorr.toFixed(2)}`);
  console.log(`error_model: ${JSON.stringify(priors.errorModel)}`);
  console.log(`pack_jitter: ${JSON.stringify(priors.packJitter)}`);
  console.log(`samples: ${samples.length}`);
  console.log(`fit_seconds: ${((Date.now() - started) / 1000).toFixed(0)}`);
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  main().catch((err) => {
    console.error(err);
    process.exit(1);
  });
}
