/**
 * The fitted part of the estimator: a small ensemble of neural networks that maps the statistics
 * of a scan (analysis.ts: printFeatures) to how the print has aged, per channel, as D' = k·D + s
 * (k and s of the best such fit between the fresh and the aged print), and to the probability that
 * it has aged at all. Its numbers are fitted on the development photographs of the accuracy lab,
 * aged by the lab's own simulator (`npm run fit-priors`, tests/lab/fit-priors.ts), and kept in
 * priors.ts. Each member was fitted with a different fifth of those photographs held out (two members
 * per fifth, with seeds of their own); their disagreement is the estimate's uncertainty.
 */
import { PRIORS } from './priors';

/** One fully connected network: weights row-major, `tanh` between layers, linear output. */
export interface NetworkWeights {
  layers: { w: number[]; b: number[]; inputs: number; outputs: number }[];
}

/** Everything `npm run fit-priors` writes. */
export interface FittedPriors {
  /** What the numbers were fitted on, and when. */
  provenance: string;
  featureMean: number[];
  featureStd: number[];
  /** Mean and spread of the six regression outputs: -ln k (red, green, blue), then s. */
  targetMean: number[];
  targetStd: number[];
  members: NetworkWeights[];
  /**
   * Strength of the correction from the probability of ageing: 0 below `from`, 1 above `to`; and,
   * where given, from how far the estimate of k may be off (the standard deviation of -ln k that
   * errorModel gives): full strength up to `unsureFrom`, none from `unsureTo`.
   */
  decision: { from: number; to: number; unsureFrom?: number; unsureTo?: number };
  /** Expected CIEDE2000 of a correction: intercept, then per unit of each uncertainty term. */
  /** `perSize`: per unit of the correction's size (mean |ln k| plus the spread of s over the channels). */
  calibration: { intercept: number; perSpreadK: number; perSpreadS: number; perDoubt: number; perSize?: number };
  /** How far prints of one pack differ in their ageing: standard deviations of -ln k and s. */
  packJitter: { k: number; s: number };
  /**
   * How far a print's estimate is from its truth, as a variance: c0 + c1 · spread² of -ln k and of s
   * (held-out residuals on the development part). The members' disagreement alone understates it.
   */
  errorModel?: { k: [number, number]; s: [number, number] };
}

/** Number of outputs of a network: six regression values and one logit. */
export const MODEL_OUTPUTS = 7;

/** Runs one network on standardised inputs. */
export function runNetwork(net: NetworkWeights, input: ArrayLike<number>): Float64Array {
  let x: ArrayLike<number> = input;
  net.layers.forEach((layer, li) => {
    const out = new Float64Array(layer.outputs);
    for (let o = 0; o < layer.outputs; o++) {
      let sum = layer.b[o];
      const row = o * layer.inputs;
      for (let i = 0; i < layer.inputs; i++) sum += layer.w[row + i] * x[i];
      out[o] = li < net.layers.length - 1 ? Math.tanh(sum) : sum;
    }
    x = out;
  });
  return x as Float64Array;
}

/** The ensemble's estimate for one print. */
export interface ModelEstimate {
  /** Dye retention k per channel (red, green, blue), mean over the members. */
  k: [number, number, number];
  /** Density offset s per channel. */
  s: [number, number, number];
  /** Probability that the print has aged at all. */
  aged: number;
  /** Standard deviation over the members of -ln k and of s (mean over the channels). */
  spreadK: number;
  spreadS: number;
}

const sigmoid = (x: number) => 1 / (1 + Math.exp(-x));

/** Standardises raw features with the fitted means and spreads. */
export function standardise(features: ArrayLike<number>, priors: FittedPriors = PRIORS): Float64Array {
  const x = new Float64Array(features.length);
  for (let i = 0; i < x.length; i++) x[i] = (features[i] - priors.featureMean[i]) / priors.featureStd[i];
  return x;
}

/** Runs the ensemble on a print's features; null when no priors are fitted. */
export function estimateAgeing(features: ArrayLike<number>, priors: FittedPriors = PRIORS): ModelEstimate | null {
  if (priors.members.length === 0 || priors.featureMean.length !== features.length) return null;
  const x = standardise(features, priors);
  const outs = priors.members.map((m) => runNetwork(m, x));
  const n = outs.length;
  const mean = new Float64Array(MODEL_OUTPUTS);
  for (const o of outs) for (let j = 0; j < MODEL_OUTPUTS; j++) mean[j] += o[j] / n;
  const values = (o: ArrayLike<number>, j: number) => o[j] * priors.targetStd[j] + priors.targetMean[j];
  let varK = 0;
  let varS = 0;
  for (const o of outs) {
    for (let c = 0; c < 3; c++) {
      varK += (values(o, c) - values(mean, c)) ** 2 / (3 * n);
      varS += (values(o, c + 3) - values(mean, c + 3)) ** 2 / (3 * n);
    }
  }
  const aged = outs.reduce((a, o) => a + sigmoid(o[6]), 0) / n;
  return {
    k: [0, 1, 2].map((c) => Math.exp(-values(mean, c))) as [number, number, number],
    s: [0, 1, 2].map((c) => values(mean, c + 3)) as [number, number, number],
    aged,
    spreadK: Math.sqrt(varK),
    spreadS: Math.sqrt(varS),
  };
}

/** Expected CIEDE2000 of the correction made from an estimate, from its uncertainty (fitted on the development part). */
export function expectedError(e: Pick<ModelEstimate, 'spreadK' | 'spreadS' | 'aged' | 'k' | 's'>, priors: FittedPriors = PRIORS): number {
  const c = priors.calibration;
  const terms = uncertaintyTerms(e);
  return Math.max(0, c.intercept + c.perSpreadK * terms.spreadK + c.perSpreadS * terms.spreadS + c.perDoubt * terms.doubt + (c.perSize ?? 0) * terms.size);
}

/** What the expected error is made of: the members' disagreement, doubt whether the print aged, and how large the correction is. */
export function uncertaintyTerms(e: Pick<ModelEstimate, 'spreadK' | 'spreadS' | 'aged' | 'k' | 's'>): { spreadK: number; spreadS: number; doubt: number; size: number } {
  const lnK = (Math.abs(Math.log(e.k[0])) + Math.abs(Math.log(e.k[1])) + Math.abs(Math.log(e.k[2]))) / 3;
  const size = lnK + Math.max(...e.s) - Math.min(...e.s);
  return { spreadK: e.spreadK, spreadS: e.spreadS, doubt: 1 - Math.abs(2 * e.aged - 1), size };
}

/** Variance of a print's estimated -ln k and s around their truth (for pooling a batch). */
export function estimateVariance(e: Pick<ModelEstimate, 'spreadK' | 'spreadS'>, priors: Pick<FittedPriors, 'errorModel'> = PRIORS): { k: number; s: number } {
  const m = priors.errorModel;
  if (!m) return { k: Math.max(e.spreadK, 0.02) ** 2, s: Math.max(e.spreadS, 0.01) ** 2 };
  return { k: Math.max(m.k[0] + m.k[1] * e.spreadK ** 2, 0.02 ** 2), s: Math.max(m.s[0] + m.s[1] * e.spreadS ** 2, 0.01 ** 2) };
}
