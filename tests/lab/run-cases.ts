/**
 * Runs lab cases through the engine the way `npm run correct` does (JPEG scan in, the engine's
 * decode, analysis and per-channel tables), beside three baselines: the scan untouched, a
 * per-channel 0.5-99.5 % percentile stretch, and the exact inverse of the true ageing (the floor).
 */
import sharp from 'sharp';
import { analysePixels, poolAnalyses, type Analysis } from '../../src/lib/restoration/analysis';
import { applyCorrection, buildChannelLuts, type Correction } from '../../src/lib/restoration/correction';
import { loadReduced } from '../../src/lib/restoration/imaging';
import { LAB_SIDE, type LabCase } from './cases';
import { labAt, meanDeltaE00, samplePoints } from './metrics';
import { loadPhoto } from './photos';
import { agePhoto, exactInverse, type Print } from './simulator';

export type Method = 'drawerlight' | 'untouched' | 'stretch' | 'floor';
export const METHODS: Method[] = ['drawerlight', 'untouched', 'stretch', 'floor'];

export interface CaseResult {
  name: string;
  part: LabCase['part'];
  category: LabCase['category'];
  kind: LabCase['kind'];
  pack?: string;
  bordered: boolean;
  /** Mean CIEDE2000 to the fresh print (faded and pack cases) or to the scan itself (unfaded cases). */
  de: Record<Method, number>;
  /** For pack cases: the engine with the pack's pooled estimate. */
  pooledDe?: number;
  fadeGrade: string;
  /** The engine's own expectation of its error, where it gives one. */
  expected: number;
}

interface Prepared {
  c: LabCase;
  print: Print;
  scan: Uint8Array;
  width: number;
  height: number;
  analysis: Analysis;
  points: Int32Array;
}

async function prepare(c: LabCase): Promise<Prepared> {
  const photo = await loadPhoto(c.photo, LAB_SIDE);
  const print = agePhoto(photo, c.ageing, c.seed);
  const jpeg = await sharp(Buffer.from(print.aged.buffer, print.aged.byteOffset, print.aged.length), { raw: { width: print.width, height: print.height, channels: 3 } })
    .jpeg({ quality: c.ageing.jpegQuality })
    .toBuffer();
  const px = await loadReduced(jpeg);
  if (px.width !== print.width || px.height !== print.height || px.channels !== 3) throw new Error(`${c.name}: decoded ${px.width}x${px.height}x${px.channels}`);
  const scan = px.data as Uint8Array;
  return { c, print, scan, width: px.width, height: px.height, analysis: analysePixels(px), points: samplePoints(print.width, print.inner, 3) };
}

function render(scan: Uint8Array, correction: Correction): Uint8Array {
  return applyCorrection(scan, 3, buildChannelLuts(correction, 8)) as Uint8Array;
}

/** Per-channel 0.5-99.5 % stretch of the whole scan: the one-click baseline. */
export function stretch(scan: Uint8Array): Uint8Array {
  const out = new Uint8Array(scan.length);
  for (let c = 0; c < 3; c++) {
    const h = new Uint32Array(256);
    for (let i = c; i < scan.length; i += 3) h[scan[i]]++;
    const n = scan.length / 3;
    const at = (p: number) => {
      let acc = 0;
      for (let v = 0; v < 256; v++) if ((acc += h[v]) > p * n) return v;
      return 255;
    };
    const lo = at(0.005);
    const hi = Math.max(lo + 1, at(0.995));
    for (let i = c; i < scan.length; i += 3) out[i] = Math.max(0, Math.min(255, Math.round(((scan[i] - lo) / (hi - lo)) * 255)));
  }
  return out;
}

function floorImage(p: Prepared): Uint8Array {
  const out = new Uint8Array(p.scan.length);
  const { width: w, height: h } = p;
  for (let k = 0; k < p.points.length; k++) {
    const idx = p.points[k];
    const i = idx * 3;
    const v = exactInverse(p.c.ageing, [p.scan[i], p.scan[i + 1], p.scan[i + 2]], idx % w, Math.floor(idx / w), w, h);
    out[i] = v[0];
    out[i + 1] = v[1];
    out[i + 2] = v[2];
  }
  return out;
}

function expectedError(a: Analysis): number {
  const own = (a as Analysis & { expectedDeltaE00?: number }).expectedDeltaE00;
  return typeof own === 'number' ? own : 1 - a.confidence;
}

function measure(p: Prepared, analysis: Analysis): CaseResult {
  const ref = labAt(p.c.kind === 'unfaded' ? p.scan : p.print.fresh, p.points);
  const de = {
    drawerlight: meanDeltaE00(render(p.scan, analysis.proposed), ref, p.points),
    untouched: meanDeltaE00(p.scan, ref, p.points),
    stretch: meanDeltaE00(stretch(p.scan), ref, p.points),
    floor: p.c.kind === 'unfaded' ? 0 : meanDeltaE00(floorImage(p), ref, p.points),
  };
  return {
    name: p.c.name,
    part: p.c.part,
    category: p.c.category,
    kind: p.c.kind,
    pack: p.c.pack,
    bordered: p.c.ageing.border > 0,
    de,
    fadeGrade: analysis.fadeGrade,
    expected: expectedError(analysis),
  };
}

/** Runs every case; pack cases are also corrected with their pack's pooled estimate. */
export async function runCases(cases: LabCase[], progress?: (done: number, total: number) => void): Promise<CaseResult[]> {
  const results: CaseResult[] = [];
  const packs = new Map<string, Prepared[]>();
  let done = 0;
  for (const c of cases) {
    const p = await prepare(c);
    if (c.pack) {
      const list = packs.get(c.pack) ?? [];
      list.push(p);
      packs.set(c.pack, list);
    } else {
      results.push(measure(p, p.analysis));
    }
    progress?.(++done, cases.length);
  }
  for (const members of packs.values()) {
    const pooled = poolAnalyses(members.map((m) => m.analysis));
    members.forEach((m, k) => {
      const single = measure(m, m.analysis);
      single.pooledDe = meanDeltaE00(render(m.scan, pooled[k].proposed), labAt(m.print.fresh, m.points), m.points);
      results.push(single);
    });
  }
  return results;
}
