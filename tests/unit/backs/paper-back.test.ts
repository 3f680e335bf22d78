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
import { generatedBack, PAPERS, type BackMarks } from '../../support/back-scans.ts';

const W = 600;
const H = 400;

/** A generated back (tests/support/back-scans.ts) of W×H, as raw RGB; its paper is PAPERS[seed % 3]. */
async function backPixels(marks: BackMarks, seed: number): Promise<Uint8Array> {
  const { bytes } = await generatedBack(marks, seed, { width: W, height: H });
  return new Uint8Array(await sharp(bytes).removeAlpha().raw().toBuffer());
}

describe('recognising a back', () => {
  it('takes every generated back for a back: blank, stamped, handwritten, on white and on yellowed paper', async () => {
    for (let seed = 0; seed < PAPERS.length; seed++) {
      for (const marks of ['blank', 'stamp', 'handwriting', 'both'] as const) {
        const m = measureBack(await backPixels(marks, seed), W, H);
        expect(m.back, `${marks} on ${PAPERS[seed].join(',')}: ${JSON.stringify(m)}`).toBe(true);
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
    const back = await backPixels('both', 100);
    const every = measureBack(back, W, H);
    const sampled = measureBack(back, W, H, 3, 7);
    expect(sampled.back).toBe(every.back);
    expect(Math.abs(sampled.paperShare - every.paperShare)).toBeLessThan(0.02);
  });
});
