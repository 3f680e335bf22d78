/**
 * Fits the estimator's small networks (print-model.ts runs them): fully connected, tanh between
 * layers, six regression outputs (mean squared error) and one logit (cross-entropy), trained with
 * Adam (Kingma & Ba, 2015) and a small weight decay. Plain typed arrays; seeded, so a fit is repeatable.
 */
import type { NetworkWeights } from '../../src/lib/restoration/print-model';
import { rng } from './simulator';

export interface TrainingSet {
  x: Float64Array[];
  /** Standardised regression targets (6) and the aged label (0/1) as the 7th. */
  y: Float64Array[];
}

export interface TrainOptions {
  hidden: number[];
  epochs: number;
  batch: number;
  rate: number;
  decay: number;
  /** Weight of the cross-entropy of the aged label beside the regression. */
  labelWeight: number;
  seed: number;
}

interface Layer {
  w: Float64Array;
  b: Float64Array;
  inputs: number;
  outputs: number;
  mw: Float64Array;
  vw: Float64Array;
  mb: Float64Array;
  vb: Float64Array;
  gw: Float64Array;
  gb: Float64Array;
}

function gauss(r: () => number): number {
  return Math.sqrt(-2 * Math.log(Math.max(r(), 1e-12))) * Math.cos(2 * Math.PI * r());
}

/** Trains one network on the set; returns its weights in the form print-model.ts reads. */
export function train(set: TrainingSet, o: TrainOptions): NetworkWeights {
  const r = rng(o.seed);
  const sizes = [set.x[0].length, ...o.hidden, set.y[0].length];
  const layers: Layer[] = [];
  for (let l = 0; l < sizes.length - 1; l++) {
    const inputs = sizes[l];
    const outputs = sizes[l + 1];
    const scale = Math.sqrt(1 / inputs);
    const w = Float64Array.from({ length: inputs * outputs }, () => gauss(r) * scale);
    const z = () => new Float64Array(inputs * outputs);
    const zb = () => new Float64Array(outputs);
    layers.push({ w, b: zb(), inputs, outputs, mw: z(), vw: z(), mb: zb(), vb: zb(), gw: z(), gb: zb() });
  }
  const n = set.x.length;
  const order = Array.from({ length: n }, (_, i) => i);
  const acts: Float64Array[] = sizes.map((s) => new Float64Array(s));
  const deltas: Float64Array[] = sizes.map((s) => new Float64Array(s));
  let step = 0;
  const beta1 = 0.9;
  const beta2 = 0.999;
  for (let epoch = 0; epoch < o.epochs; epoch++) {
    for (let i = n - 1; i > 0; i--) {
      const j = Math.floor(r() * (i + 1));
      [order[i], order[j]] = [order[j], order[i]];
    }
    const rate = o.rate * (0.5 + 0.5 * Math.cos((Math.PI * epoch) / o.epochs));
    for (let start = 0; start < n; start += o.batch) {
      const end = Math.min(n, start + o.batch);
      for (const L of layers) {
        L.gw.fill(0);
        L.gb.fill(0);
      }
      for (let s = start; s < end; s++) {
        const idx = order[s];
        acts[0].set(set.x[idx]);
        layers.forEach((L, l) => {
          const out = acts[l + 1];
          const inp = acts[l];
          for (let q = 0; q < L.outputs; q++) {
            let sum = L.b[q];
            const row = q * L.inputs;
            for (let p = 0; p < L.inputs; p++) sum += L.w[row + p] * inp[p];
            out[q] = l < layers.length - 1 ? Math.tanh(sum) : sum;
          }
        });
        const last = layers.length;
        const y = set.y[idx];
        const outA = acts[last];
        const dOut = deltas[last];
        const regs = outA.length - 1;
        for (let q = 0; q < regs; q++) dOut[q] = (2 * (outA[q] - y[q])) / regs;
        const p = 1 / (1 + Math.exp(-outA[regs]));
        dOut[regs] = o.labelWeight * (p - y[regs]);
        for (let l = last - 1; l >= 0; l--) {
          const L = layers[l];
          const inp = acts[l];
          const dl = deltas[l + 1];
          const dPrev = deltas[l];
          dPrev.fill(0);
          for (let q = 0; q < L.outputs; q++) {
            const g = dl[q];
            L.gb[q] += g;
            const row = q * L.inputs;
            for (let pp = 0; pp < L.inputs; pp++) {
              L.gw[row + pp] += g * inp[pp];
              dPrev[pp] += g * L.w[row + pp];
            }
          }
          if (l > 0) for (let pp = 0; pp < L.inputs; pp++) dPrev[pp] *= 1 - inp[pp] * inp[pp];
        }
      }
      step++;
      const count = end - start;
      const c1 = 1 - beta1 ** step;
      const c2 = 1 - beta2 ** step;
      for (const L of layers) {
        for (let k = 0; k < L.w.length; k++) {
          const g = L.gw[k] / count + o.decay * L.w[k];
          L.mw[k] = beta1 * L.mw[k] + (1 - beta1) * g;
          L.vw[k] = beta2 * L.vw[k] + (1 - beta2) * g * g;
          L.w[k] -= (rate * (L.mw[k] / c1)) / (Math.sqrt(L.vw[k] / c2) + 1e-8);
        }
        for (let k = 0; k < L.b.length; k++) {
          const g = L.gb[k] / count;
          L.mb[k] = beta1 * L.mb[k] + (1 - beta1) * g;
          L.vb[k] = beta2 * L.vb[k] + (1 - beta2) * g * g;
          L.b[k] -= (rate * (L.mb[k] / c1)) / (Math.sqrt(L.vb[k] / c2) + 1e-8);
        }
      }
    }
  }
  const round = (x: number) => Math.round(x * 1e6) / 1e6;
  return { layers: layers.map((L) => ({ w: Array.from(L.w, round), b: Array.from(L.b, round), inputs: L.inputs, outputs: L.outputs })) };
}
