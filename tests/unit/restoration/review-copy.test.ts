/**
 * The review copy: the reduced decode the analyse job measures and shows (imaging.ts,
 * reviewCopySide and analyseForReview). A JPEG is decoded at 1/2, 1/4 or 1/8 scale by the decoder,
 * so a 3600 px scan is measured on 900 px instead of 1280 px; these tests check that this costs the
 * restoration nothing measurable. ΔE00 is the engine's own CIEDE2000, itself checked against the 34
 * pairs of Sharma, Wu & Dalal 2005 in colour.test.ts; the scenes are invented (src/lib/demo/synthetic.ts).
 */
import { describe, expect, it } from 'vitest';
import sharp from 'sharp';
import { ANALYSIS_MIN_SIDE, ANALYSIS_SIDE, analyseForReview, loadReduced, renderCorrected, reviewCopySide } from '../../../src/lib/restoration/imaging';
import { analysePixels } from '../../../src/lib/restoration/analysis';
import { meanDeltaE } from '../../support/delta-e.ts';
import { AGEING_MODELS, agePixels, encodeScene, generateScene } from '../../../src/lib/demo/synthetic';

describe('the size of the review copy', () => {
  it("is the smallest of a JPEG's shrink-on-load sizes that keeps 900 px, at most 1280 px", () => {
    expect([ANALYSIS_MIN_SIDE, ANALYSIS_SIDE]).toEqual([900, 1280]);
    expect(reviewCopySide(3600, 'jpeg')).toBe(900); // 6x4 in at 600 dpi: 1/4
    expect(reviewCopySide(7200, 'jpeg')).toBe(900); // at 1200 dpi: 1/8
    expect(reviewCopySide(2400, 'jpeg')).toBe(1200); // at 400 dpi: 1/2
    expect(reviewCopySide(5000, 'jpeg')).toBe(1250); // 1/4
    expect(reviewCopySide(3000, 'jpeg')).toBe(1280); // 1/2 gives 1500: reduced further
    expect(reviewCopySide(700, 'jpeg')).toBe(700); // never larger than the scan
  });

  it('is 1280 px for formats that decode whole anyway', () => {
    expect(reviewCopySide(3600, 'png')).toBe(1280);
    expect(reviewCopySide(3600, 'tiff')).toBe(1280);
    expect(reviewCopySide(1000, 'tiff')).toBe(1000);
  });
});

async function reduced(input: Buffer, raw?: { width: number; height: number }): Promise<Buffer> {
  const img = raw ? sharp(input, { raw: { ...raw, channels: 3 } }) : sharp(input);
  return img.resize(600, 400, { kernel: 'linear' }).raw().toBuffer();
}


describe('measuring a 3600 x 2400 scan on its review copy', () => {
  const cases = [
    { name: 'dark storage, no border', ageing: AGEING_MODELS.darkStorage(0.6), border: false, monochrome: false },
    { name: 'light fading, no border', ageing: AGEING_MODELS.lightFaded(1), border: false, monochrome: false },
    { name: 'a yellowed black-and-white print with a border', ageing: AGEING_MODELS.yellowedMonochrome(0.8), border: true, monochrome: true },
  ];
  for (const c of cases) {
    it(`restores ${c.name} as well as a 1280 px copy does`, async () => {
      const scene = generateScene({ width: 3600, height: 2400, border: c.border, monochrome: c.monochrome, seed: 7 });
      const file = await encodeScene(agePixels(scene, c.ageing), { format: 'jpeg', quality: 92 });
      const unaged = await reduced(Buffer.from(scene.data.buffer, scene.data.byteOffset, scene.data.byteLength), { width: 3600, height: 2400 });

      const review = await analyseForReview(file, { previews: { preview: 1280, thumbnail: 360 } });
      expect((await sharp(review.previews.corrected.preview!).metadata()).width).toBe(900);
      const larger = analysePixels(await loadReduced(file, 1280));
      const fromReview = meanDeltaE(await reduced((await renderCorrected(file, review.correction)).buffer), unaged);
      const fromLarger = meanDeltaE(await reduced((await renderCorrected(file, larger.proposed)).buffer), unaged);
      console.log(`${c.name}: mean ΔE00 to the unaged scene ${fromReview.toFixed(3)} (900 px copy) vs ${fromLarger.toFixed(3)} (1280 px)`);
      expect(review.analysis.fadeGrade).toBe(larger.fadeGrade);
      expect(fromReview).toBeLessThan(fromLarger + 0.25);
    }, 60_000);
  }
});
