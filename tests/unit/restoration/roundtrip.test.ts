/**
 * Round trip: invented scenes (src/lib/demo/synthetic.ts), aged by the density model of
 * TRADE.md, saved as JPEG q92, then analysed and rendered by the engine, compared with the scene
 * before ageing in CIEDE2000. The per-channel percentile stretch is the naive baseline.
 */
import { afterAll, describe, expect, it } from 'vitest';
import sharp from 'sharp';
import { AGEING_MODELS, agePixels, encodeScene, generateScene, type Ageing } from '../../../src/lib/demo/synthetic';
import { analyseAndRender } from '../../../src/lib/restoration/imaging';
import { srgbToLab } from '../../../src/lib/restoration/colour';
import { meanDeltaE } from '../../support/delta-e.ts';

const W = 600;
const H = 400;


/** Baseline (common practice): stretch each channel so its 0.5th and 99.5th percentiles reach 0 and 255. */
function percentileStretch(data: Uint8Array): Uint8Array {
  const out = new Uint8Array(data.length);
  for (let c = 0; c < 3; c++) {
    const hist = new Uint32Array(256);
    for (let i = c; i < data.length; i += 3) hist[data[i]]++;
    const n = data.length / 3;
    const at = (p: number) => {
      let acc = 0;
      for (let v = 0; v < 256; v++) if ((acc += hist[v]) > p * n) return v;
      return 255;
    };
    const lo = at(0.005);
    const hi = Math.max(at(0.995), lo + 1);
    for (let i = c; i < data.length; i += 3) out[i] = Math.round(Math.min(255, Math.max(0, ((data[i] - lo) * 255) / (hi - lo))));
  }
  return out;
}

async function decode(jpeg: Buffer): Promise<Uint8Array> {
  const { data } = await sharp(jpeg).raw().toBuffer({ resolveWithObject: true });
  return new Uint8Array(data.buffer, data.byteOffset, data.length);
}

const figures: string[] = [];
afterAll(() => {
  console.info(['round trip, mean dE00 to the unaged scene (aged / engine / stretch):', ...figures].join('\n'));
});

async function roundTrip(opts: { border: boolean; monochrome?: boolean; ageing: Ageing }) {
  const scene = generateScene({ width: W, height: H, border: opts.border, monochrome: opts.monochrome, seed: 11 });
  const jpeg = await encodeScene(agePixels(scene, opts.ageing), { format: 'jpeg', quality: 92 });
  const aged = await decode(jpeg);
  const result = await analyseAndRender(jpeg);
  const restored = await decode(result.buffer);
  return { scene, aged, restored, result, engine: meanDeltaE(scene.data, restored), stretch: meanDeltaE(scene.data, percentileStretch(aged)), before: meanDeltaE(scene.data, aged) };
}

describe('round trip through JPEG', () => {
  const cases: [string, boolean, Ageing][] = [];
  for (const border of [true, false]) {
    for (const sev of [0.5, 1]) {
      cases.push([`dark storage ${sev}, ${border ? 'border' : 'no border'}`, border, AGEING_MODELS.darkStorage(sev)]);
      cases.push([`light fading ${sev}, ${border ? 'border' : 'no border'}`, border, AGEING_MODELS.lightFaded(sev)]);
    }
  }

  it.each(cases)('restores %s to under 2 dE00 mean, at most half the stretch baseline', async (name, border, ageing) => {
    const r = await roundTrip({ border, ageing });
    figures.push(`${name}: ${r.before.toFixed(2)} / ${r.engine.toFixed(2)} / ${r.stretch.toFixed(2)}`);
    expect(r.result.width).toBe(W);
    expect(r.result.height).toBe(H);
    expect(r.engine).toBeLessThan(2);
    expect(r.engine).toBeLessThan(0.5 * r.stretch);
  });

  it.each([true, false])('keeps an unfaded print within 1 dE00 (border: %s), where the stretch changes it', async (border) => {
    const scene = generateScene({ width: W, height: H, border, seed: 11 });
    const jpeg = await encodeScene(scene, { format: 'jpeg', quality: 92 });
    const input = await decode(jpeg);
    const result = await analyseAndRender(jpeg);
    const change = meanDeltaE(input, await decode(result.buffer));
    const stretchChange = meanDeltaE(input, percentileStretch(input));
    figures.push(`unaged (border ${border}): engine change ${change.toFixed(2)}, stretch change ${stretchChange.toFixed(2)}`);
    expect(result.analysis.fadeGrade).toBe('none');
    expect(change).toBeLessThan(1);
    expect(stretchChange).toBeGreaterThan(change + 1);
  });

  it.each([
    [true, 0.5],
    [true, 1],
    [false, 1],
  ])('brings a yellowed black-and-white print back neutral (border: %s, severity %s)', async (border, sev) => {
    const r = await roundTrip({ border, monochrome: true, ageing: AGEING_MODELS.yellowedMonochrome(sev) });

    let chroma = 0;
    let agedChroma = 0;
    let n = 0;
    for (let i = 0; i < r.restored.length; i += 3 * 5) {
      const lab = srgbToLab([r.restored[i] / 255, r.restored[i + 1] / 255, r.restored[i + 2] / 255]);
      const labAged = srgbToLab([r.aged[i] / 255, r.aged[i + 1] / 255, r.aged[i + 2] / 255]);
      chroma += Math.hypot(lab[1], lab[2]);
      agedChroma += Math.hypot(labAged[1], labAged[2]);
      n++;
    }
    figures.push(`yellowed b&w ${sev}, border ${border}: ${r.before.toFixed(2)} / ${r.engine.toFixed(2)} / ${r.stretch.toFixed(2)}; mean C*ab ${(agedChroma / n).toFixed(2)} -> ${(chroma / n).toFixed(2)}`);
    // neutral: mean chroma C*ab under 1.5 (about one just-noticeable difference), from a clearly yellow start
    expect(agedChroma / n).toBeGreaterThan(5);
    expect(chroma / n).toBeLessThan(1.5);
    expect(r.engine).toBeLessThan(2);
  });
});
