/**
 * The backs generated for the tests and the benchmark (tests/support/back-scans.ts: paper texture,
 * an invented lab's imprint in several fonts, a rotated handwritten-style line, a blank back), fed
 * between fronts (the demo's invented scenes) as a scanner that scans both sides writes them:
 * every back is recognised and paired with the right front; the text recognition (tesseract.js with
 * the English data of the npm registry, read from node_modules) reads the imprint's date on most.
 */
import sharp from 'sharp';
import { afterAll, describe, expect, it } from 'vitest';
import { dateOnBack } from '../../../src/lib/backs/back-dates.ts';
import { pairBacks, type FedScan } from '../../../src/lib/backs/pairing.ts';
import { measureBack } from '../../../src/lib/backs/paper-back.ts';
import { syntheticScan, AGEING_MODELS } from '../../../src/lib/demo/synthetic.ts';
import { closeTextReader, englishDataPath, readBackText } from '../../../src/lib/server/back-text.ts';
import { generatedBack, type BackMarks } from '../../support/back-scans.ts';
import { existsSync } from 'node:fs';
import path from 'node:path';

const MARKS: BackMarks[] = ['stamp', 'handwriting', 'both', 'blank'];

async function looksLikeBack(bytes: Buffer): Promise<boolean> {
  const { data, info } = await sharp(bytes).removeAlpha().raw().toBuffer({ resolveWithObject: true });
  return measureBack(data, info.width, info.height, info.channels).back;
}

afterAll(closeTextReader);

describe('generated backs in a duplex feed', () => {
  it('recognises every back and pairs each with the front fed before it', async () => {
    const scans: FedScan[] = [];
    const expected: { frontId: string; backId: string }[] = [];
    for (let n = 0; n < 12; n++) {
      const front = await syntheticScan({ width: 600, height: 400, seed: 500 + n, border: n % 2 === 0, ageing: AGEING_MODELS.darkStorage(0.8), format: 'jpeg', quality: 90 });
      const back = await generatedBack(MARKS[n % MARKS.length], n + 1, { width: 600, height: 400 });
      const f = { id: `f${n}`, seq: 2 * n + 1, name: `scan_${String(2 * n + 1).padStart(4, '0')}.jpg`, looksLikeBack: await looksLikeBack(front) };
      const b = { id: `b${n}`, seq: 2 * n + 2, name: `scan_${String(2 * n + 2).padStart(4, '0')}.jpg`, looksLikeBack: await looksLikeBack(back.bytes) };
      expect(f.looksLikeBack, `front ${n}`).toBe(false);
      expect(b.looksLikeBack, `back ${n} (${MARKS[n % MARKS.length]})`).toBe(true);
      scans.push(f, b);
      expected.push({ frontId: f.id, backId: b.id });
    }
    const p = pairBacks(scans);
    expect(p.pairs.map(({ frontId, backId }) => ({ frontId, backId }))).toEqual(expected);
    expect(p.unpairedBacks).toEqual([]);
  });
});

describe('reading the back', () => {
  it('reads the English data from node_modules, where nothing is downloaded', () => {
    expect(existsSync(path.join(englishDataPath(), 'eng.traineddata.gz'))).toBe(true);
  });

  it("reads the imprint's month and year on most stamped backs, in every font", async () => {
    let read = 0;
    let stamped = 0;
    const misses: string[] = [];
    for (let seed = 1; seed <= 8; seed++) {
      const back = await generatedBack(seed % 2 ? 'stamp' : 'both', seed);
      const { text } = await readBackText(back.bytes);
      stamped++;
      const found = dateOnBack(text);
      if (found?.edtf === back.date) read++;
      else misses.push(`seed ${seed}: expected ${back.date}, read ${JSON.stringify(text)}`);
    }
    // most, not all: OCR of a stamp is not certain, and a date read wrongly is only a suggestion
    expect(read / stamped, misses.join('\n')).toBeGreaterThanOrEqual(0.75);
  }, 180_000);

  it('reads nothing from a blank back', async () => {
    const { text } = await readBackText((await generatedBack('blank', 5)).bytes);
    expect(dateOnBack(text)).toBeNull();
    expect(text.replace(/\s/g, '').length).toBeLessThan(4);
  }, 60_000);
});
