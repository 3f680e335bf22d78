/**
 * Telling the back of a print from its picture. Backs are generated here (invented, our own): paper
 * of a few ages (white to cream) with texture and scanner noise, carrying a lab's stamp in a few
 * fonts, a rotated handwritten-style line, both, or nothing. Fronts are the demo's invented scenes
 * (src/lib/demo/synthetic.ts), fresh and aged, with and without a white border, colour and black-and-white.
 */
import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import { AGEING_MODELS, agePixels, generateScene } from '../../../src/lib/demo/synthetic.ts';
import { measureBack } from '../../../src/lib/backs/paper-back.ts';

const W = 600;
const H = 400;
const PAPERS: [number, number, number][] = [[246, 244, 238], [238, 228, 205], [226, 212, 180]];
const FONTS = ['DejaVu Sans', 'DejaVu Serif', 'DejaVu Sans Mono'];

/** A small deterministic generator. */
function random(seed: number) {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = Math.imul(s ^ (s >>> 15), s | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

type Marks = 'blank' | 'stamp' | 'handwriting' | 'both';

/** A back of paper `paper` with the given marks, as raw RGB. */
async function generatedBack(paper: [number, number, number], marks: Marks, seed: number): Promise<Uint8Array> {
  const rnd = random(seed);
  const font = FONTS[seed % FONTS.length];
  const parts: string[] = [];
  if (marks === 'stamp' || marks === 'both') {
    parts.push(`<g transform="translate(${60 + Math.round(rnd() * 200)} ${90 + Math.round(rnd() * 120)})" fill="none" stroke="#5a4a8a" stroke-width="2">
      <rect width="190" height="58" rx="6"/><text x="12" y="24" font-family="${font}" font-size="16" fill="#5a4a8a" stroke="none">HARTIGAN LAB</text>
      <text x="12" y="46" font-family="${font}" font-size="15" fill="#5a4a8a" stroke="none">AUG 81  0714</text></g>`);
  }
  if (marks === 'handwriting' || marks === 'both') {
    let d = `M ${80 + Math.round(rnd() * 60)} 300`;
    for (let x = 0; x < 34; x++) d += ` q 4 ${-14 - Math.round(rnd() * 10)} 8 0 t ${5 + Math.round(rnd() * 4)} ${Math.round(rnd() * 6) - 3}`;
    parts.push(`<path d="${d}" transform="rotate(${-8 + Math.round(rnd() * 16)} 300 300)" fill="none" stroke="#2a2f5a" stroke-width="2.2" stroke-linecap="round"/>`);
  }
  const svg = Buffer.from(`<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}">${parts.join('')}</svg>`);
  const base = new Uint8Array(W * H * 3);
  for (let i = 0; i < W * H; i++) {
    const grain = (rnd() - 0.5) * 10 + Math.sin(i * 0.013) * 2;
    for (let c = 0; c < 3; c++) base[i * 3 + c] = Math.max(0, Math.min(255, Math.round(paper[c] + grain)));
  }
  const out = await sharp(Buffer.from(base), { raw: { width: W, height: H, channels: 3 } })
    .composite([{ input: svg }])
    .jpeg({ quality: 88 })
    .toBuffer();
  return new Uint8Array(await sharp(out).removeAlpha().raw().toBuffer());
}

describe('recognising a back', () => {
  it('takes every generated back for a back: blank, stamped, handwritten, on white and on yellowed paper', async () => {
    let n = 0;
    for (const paper of PAPERS) {
      for (const marks of ['blank', 'stamp', 'handwriting', 'both'] as const) {
        const m = measureBack(await generatedBack(paper, marks, ++n), W, H);
        expect(m.back, `${marks} on ${paper.join(',')}: ${JSON.stringify(m)}`).toBe(true);
        if (marks === 'blank') expect(m.markShare).toBeLessThan(0.002);
        else expect(m.markShare).toBeGreaterThan(0.002);
      }
    }
  });

  it('never takes a photograph for a back: scenes fresh and aged, bordered or not, in colour and black-and-white', () => {
    const ageings = [AGEING_MODELS.none(), AGEING_MODELS.darkStorage(1), AGEING_MODELS.lightFaded(0.8), AGEING_MODELS.yellowedMonochrome(0.7)];
    for (let seed = 1; seed <= 24; seed++) {
      const scene = generateScene({ width: 360, height: 240, seed, border: seed % 2 === 0, monochrome: seed % 4 === 3 });
      const aged = agePixels(scene, ageings[seed % ageings.length]);
      const m = measureBack(aged.data, aged.width, aged.height);
      expect(m.back, `scene ${seed}: ${JSON.stringify(m)}`).toBe(false);
    }
  });

  it('samples a large scan without changing its verdict', async () => {
    const back = await generatedBack(PAPERS[1], 'both', 99);
    const every = measureBack(back, W, H);
    const sampled = measureBack(back, W, H, 3, 7);
    expect(sampled.back).toBe(every.back);
    expect(Math.abs(sampled.paperShare - every.paperShare)).toBeLessThan(0.02);
  });
});
