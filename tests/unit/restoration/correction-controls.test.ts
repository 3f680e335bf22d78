/**
 * The correction's operator controls: black point, overall contrast, tone curves per channel,
 * quarter turns and crop; and corrections stored before these existed rendering exactly as before.
 */
import { createHash } from 'node:crypto';
import sharp from 'sharp';
import { describe, expect, it } from 'vitest';
import {
  applyCorrection,
  applyGeometry,
  buildChannelLuts,
  correctionSchema,
  geometryPlan,
  hasGeometry,
  identityCorrection,
  isIdentity,
  monotoneCurve,
  type Correction,
} from '../../../src/lib/restoration/correction';
import { srgbDecode, srgbEncode } from '../../../src/lib/restoration/colour';

function lutHash(c: Correction, depth: 8 | 16, outDepth: 8 | 16): string {
  const l = buildChannelLuts(c, depth, outDepth);
  const h = createHash('sha256');
  for (const t of [l.red, l.green, l.blue]) h.update(Buffer.from(t.buffer, t.byteOffset, t.byteLength));
  return h.digest('hex');
}

/**
 * Two corrections as stored before the controls existed (values invented for the test), and the
 * SHA-256 of their channel tables as the engine built them then (computed with the engine of
 * that time, before the new fields were added).
 */
const STORED_BEFORE = [
  {
    params: { version: 1, whitePoint: [0.93, 0.88, 0.71], curves: { red: { densityGain: 1.42 }, green: { densityGain: 1.08 }, blue: { densityGain: 0.97 } }, strength: 0.85 },
    tables: {
      '8>8': '2f24245e8176f079748ae2f1bf74840b18028590ae8ec9b6f56339ccdc690bd2',
      '16>8': 'c80ae30b6b99f7a844ae88460f904dbc9fcdf85f8411cdeb5a4922f72cfd4235',
      '16>16': '00ecac72099848e71a456bdd70087343722108b2330fd78e69556fbaed3f38c2',
    },
  },
  {
    params: { version: 1, whitePoint: [0.97, 0.9, 0.8], curves: { red: { densityGain: 1.2 }, green: { densityGain: 1 }, blue: { densityGain: 1.1 } }, blackPoint: [0.05, 0.04, 0.06], whiteTarget: 0.9, strength: 1 },
    tables: {
      '8>8': '243fd152f48adc9b93a91c4caec87ed3ea013c161ddb4b983f2f5e7fe7368d14',
      '16>8': '62a8580a776e75d1e95e6c3f94afba7c35be2a17b0483b20769cdccb6ce592e0',
      '16>16': 'd2b5cdaba7787a4eb7a945264405583b25722084146fbbe23936b785dfaae7d0',
    },
  },
] as const;

describe('corrections stored before the new controls', () => {
  it('still parse, and build exactly the tables they built before, at 8 and 16 bits', () => {
    for (const old of STORED_BEFORE) {
      const c = correctionSchema.parse(JSON.parse(JSON.stringify(old.params)));
      expect(c.contrast).toBeUndefined();
      expect(c.toneCurves).toBeUndefined();
      expect(c.geometry).toBeUndefined();
      expect(hasGeometry(c)).toBe(false);
      expect(lutHash(c, 8, 8)).toBe(old.tables['8>8']);
      expect(lutHash(c, 16, 8)).toBe(old.tables['16>8']);
      expect(lutHash(c, 16, 16)).toBe(old.tables['16>16']);
    }
  });

  it('render the same when the new fields are given at their neutral values', () => {
    const c = correctionSchema.parse(STORED_BEFORE[0].params);
    const neutral: Correction = {
      ...c,
      contrast: 1,
      toneCurves: { red: [[0, 0], [1, 1]], green: [[0, 0], [0.5, 0.5], [1, 1]] },
      geometry: { quarterTurns: 0, crop: { x: 0, y: 0, width: 1, height: 1 } },
    };
    expect(correctionSchema.parse(neutral)).toEqual(neutral);
    expect(lutHash(neutral, 8, 8)).toBe(STORED_BEFORE[0].tables['8>8']);
    expect(hasGeometry(neutral)).toBe(false);
    expect(isIdentity({ ...identityCorrection(), contrast: 1, toneCurves: { blue: [[0, 0], [1, 1]] } })).toBe(true);
  });
});

describe('monotone tone curves', () => {
  // Fritsch & Carlson, SIAM J. Numer. Anal. 17(2):238-246, 1980: the radiochemical (RPN 14) data of
  // their example, monotone but with a sharp knee where an ordinary cubic spline overshoots.
  const RPN14: [number, number][] = [
    [7.99, 0], [8.09, 2.76429e-5], [8.19, 4.37498e-2], [8.7, 0.169183], [9.2, 0.469428], [10, 0.94374], [12, 0.998636], [15, 0.999919], [20, 0.999994],
  ];

  it('passes through its points and never decreases between them (Fritsch & Carlson 1980, RPN 14 data)', () => {
    const f = monotoneCurve(RPN14);
    for (const [x, y] of RPN14) expect(f(x)).toBeCloseTo(y, 12);
    let last = -Infinity;
    for (let x = 7.99; x <= 20; x += 0.001) {
      const y = f(x);
      expect(y).toBeGreaterThanOrEqual(last - 1e-12);
      expect(y).toBeLessThanOrEqual(1);
      last = y;
    }
  });

  it('is the straight line through points on a straight line (cubic Hermite with equal secants)', () => {
    const f = monotoneCurve([[0, 0.1], [0.3, 0.4], [0.8, 0.9], [0.9, 1]]);
    for (let x = 0; x <= 0.9; x += 0.01) expect(f(x)).toBeCloseTo(x + 0.1, 12);
  });

  it('is flat where its points are flat, with no bump (zero tangents, Fritsch & Carlson 1980 step 3)', () => {
    const f = monotoneCurve([[0, 0], [0.3, 0.5], [0.6, 0.5], [1, 1]]);
    for (let x = 0.3; x <= 0.6; x += 0.01) expect(f(x)).toBeCloseTo(0.5, 12);
  });

  it('moves one channel of the tables through its points and leaves the others', () => {
    const c: Correction = { ...identityCorrection(), toneCurves: { red: [[0, 0], [0.5, 0.6], [1, 1]] } };
    const luts = buildChannelLuts(c, 8);
    expect(luts.red[0]).toBe(0);
    expect(luts.red[255]).toBe(255);
    // 0.5 of 255 falls between codes: code 128 (0.50196) lands within a code of 0.6
    expect(Math.abs(luts.red[128] - 0.6 * 255)).toBeLessThanOrEqual(1);
    for (let i = 0; i < 256; i++) expect(luts.green[i]).toBe(i);
    for (let i = 1; i < 256; i++) expect(luts.red[i]).toBeGreaterThanOrEqual(luts.red[i - 1]);
  });

  it('blend toward straight with strength, and do nothing at 0', () => {
    const curve: [number, number][] = [[0, 0.1], [0.5, 0.7], [1, 1]];
    const full = buildChannelLuts({ ...identityCorrection(), toneCurves: { blue: curve } }, 8);
    const half = buildChannelLuts({ ...identityCorrection(), strength: 0.5, toneCurves: { blue: curve } }, 8);
    const none = { ...identityCorrection(), strength: 0, toneCurves: { blue: curve } };
    expect(isIdentity(none)).toBe(true);
    expect(Math.abs(half.blue[128] - (128 + full.blue[128]) / 2)).toBeLessThanOrEqual(1);
  });

  it('refuses curves that go down, points out of order and too many points', () => {
    const c = identityCorrection();
    expect(correctionSchema.safeParse({ ...c, toneCurves: { red: [[0, 0.5], [1, 0.4]] } }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, toneCurves: { red: [[0.5, 0], [0.5, 1]] } }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, toneCurves: { red: Array.from({ length: 9 }, (_, i) => [i / 8, i / 8]) } }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, toneCurves: { grey: [[0, 0], [1, 1]] } }).success).toBe(false);
  });
});

describe('overall contrast and black point', () => {
  it('contrast multiplies the density above the paper base of all three dyes alike (ISO 5 reflection density D = -log10 R)', () => {
    const c: Correction = { ...identityCorrection(), contrast: 1.5 };
    const luts = buildChannelLuts(c, 16, 16);
    for (const code of [6000, 20000, 40000, 60000]) {
      const d = -Math.log10(srgbDecode(code / 65535));
      const expected = srgbEncode(Math.pow(10, -1.5 * d)) * 65535;
      for (const t of [luts.red, luts.green, luts.blue]) expect(Math.abs(t[code] - expected)).toBeLessThanOrEqual(1);
    }
  });

  it('contrast multiplies each dye layer\u2019s own gain, and blends with strength', () => {
    const base = { ...identityCorrection(), curves: { red: { densityGain: 1.2 }, green: { densityGain: 1 }, blue: { densityGain: 1 } } };
    const both = buildChannelLuts({ ...base, contrast: 1.25 }, 16, 16);
    const d = -Math.log10(srgbDecode(30000 / 65535));
    expect(Math.abs(both.red[30000] - srgbEncode(Math.pow(10, -1.2 * 1.25 * d)) * 65535)).toBeLessThanOrEqual(1);
    const none = buildChannelLuts({ ...base, contrast: 1.25, strength: 0 }, 8);
    for (let i = 0; i < 256; i++) expect(none.green[i]).toBe(i);
  });

  it('the black point maps its own colour to black and keeps white white', () => {
    const bp: [number, number, number] = [0.12, 0.1, 0.14];
    const luts = buildChannelLuts({ ...identityCorrection(), blackPoint: bp }, 8);
    expect(luts.red[Math.round(0.12 * 255)]).toBeLessThanOrEqual(1);
    expect(luts.blue[Math.round(0.14 * 255)]).toBeLessThanOrEqual(1);
    expect(luts.green[255]).toBe(255);
  });
});

describe('quarter turns and crop', () => {
  const W = 37;
  const H = 23;
  const pixels = new Uint8Array(W * H * 3);
  for (let i = 0; i < pixels.length; i++) pixels[i] = (i * 131 + (i >> 5)) & 255;

  it('cut exactly as libvips turns and extracts (sharp rotate and extract, no resampling)', async () => {
    for (const quarterTurns of [0, 1, 2, 3] as const) {
      const c: Correction = { ...identityCorrection(), geometry: { quarterTurns, crop: { x: 0.1, y: 0.2, width: 0.7, height: 0.5 } } };
      const plan = geometryPlan(c, W, H);
      const ours = applyGeometry(pixels, W, H, 3, plan);
      const ref = await sharp(Buffer.from(pixels), { raw: { width: W, height: H, channels: 3 } })
        .rotate(quarterTurns * 90)
        .extract({ left: plan.left, top: plan.top, width: plan.width, height: plan.height })
        .raw()
        .toBuffer({ resolveWithObject: true });
      expect([ours.width, ours.height]).toEqual([ref.info.width, ref.info.height]);
      expect(Buffer.from(ours.data).equals(ref.data)).toBe(true);
    }
  });

  it('cut a reduced copy and the full size at the same place of the print', () => {
    const c: Correction = { ...identityCorrection(), geometry: { quarterTurns: 1, crop: { x: 0.05, y: 0.1, width: 0.8, height: 0.75 } } };
    const full = geometryPlan(c, 3600, 2400);
    const small = geometryPlan(c, 1280, 853);
    expect([full.turnedWidth, full.turnedHeight]).toEqual([2400, 3600]);
    expect(full.left / full.turnedWidth).toBeCloseTo(small.left / small.turnedWidth, 2);
    expect(full.width / full.turnedWidth).toBeCloseTo(small.width / small.turnedWidth, 2);
    expect(full.height / full.turnedHeight).toBeCloseTo(small.height / small.turnedHeight, 2);
  });

  it('never touch the source pixels, and are not blended by strength', () => {
    const before = Buffer.from(pixels);
    const c: Correction = { ...identityCorrection(), strength: 0, geometry: { quarterTurns: 2 } };
    expect(hasGeometry(c)).toBe(true);
    const out = applyGeometry(pixels, W, H, 3, geometryPlan(c, W, H));
    expect(Buffer.from(pixels).equals(before)).toBe(true);
    expect([...out.data.subarray(0, 3)]).toEqual([...pixels.subarray(pixels.length - 3)]);
  });

  it('refuses a crop that leaves the scan, a fifth turn and unknown geometry keys', () => {
    const c = identityCorrection();
    expect(correctionSchema.safeParse({ ...c, geometry: { quarterTurns: 0, crop: { x: 0.5, y: 0, width: 0.6, height: 1 } } }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, geometry: { quarterTurns: 4 } }).success).toBe(false);
    expect(correctionSchema.safeParse({ ...c, geometry: { quarterTurns: 1, flip: true } }).success).toBe(false);
  });

  it('applyCorrection then applyGeometry equals the geometry of the corrected pixels taken apart', () => {
    const c: Correction = { ...identityCorrection(), contrast: 1.3, geometry: { quarterTurns: 3, crop: { x: 0, y: 0.25, width: 0.5, height: 0.5 } } };
    const luts = buildChannelLuts(c, 8);
    const a = applyGeometry(applyCorrection(pixels, 3, luts) as Uint8Array, W, H, 3, geometryPlan(c, W, H));
    const plan = geometryPlan(c, W, H);
    const turned = applyGeometry(pixels, W, H, 3, plan);
    const b = applyCorrection(turned.data, 3, luts) as Uint8Array;
    expect(Buffer.from(a.data).equals(Buffer.from(b))).toBe(true);
  });
});

describe('the full-size render', () => {
  it('is turned and cropped by the correction, its small copies too, the original file unchanged', async () => {
    const { renderCorrected } = await import('../../../src/lib/restoration/imaging');
    // a scan invented for the test: a grey ramp left to right, 240 x 160, red corner mark top left
    const W0 = 240;
    const H0 = 160;
    const raw = new Uint8Array(W0 * H0 * 3);
    for (let y = 0; y < H0; y++) for (let x = 0; x < W0; x++) {
      const i = (y * W0 + x) * 3;
      const v = Math.round((x / (W0 - 1)) * 200) + 30;
      raw.set(x < 20 && y < 20 ? [220, 20, 20] : [v, v, v], i);
    }
    const png = await sharp(Buffer.from(raw), { raw: { width: W0, height: H0, channels: 3 } }).png().toBuffer();
    const before = Buffer.from(png);
    const c: Correction = { ...identityCorrection(), geometry: { quarterTurns: 1, crop: { x: 0, y: 0, width: 0.5, height: 1 } } };
    const out = await renderCorrected(png, c, { previews: { preview: 120, thumbnail: 60, correctedOnly: true } });
    expect([out.width, out.height]).toEqual([80, 240]);
    expect(png.equals(before)).toBe(true);
    // one clockwise turn takes the top-left corner mark to the top right; the crop keeps the left half, so it is gone
    const { data, info } = await sharp(out.buffer).raw().toBuffer({ resolveWithObject: true });
    expect([info.width, info.height]).toEqual([80, 240]);
    const px = (x: number, y: number) => [...data.subarray((y * info.width + x) * 3, (y * info.width + x) * 3 + 3)];
    // top of the turned scan is its left edge (dark end of the ramp), bottom the bright end
    expect(px(40, 5)[1]).toBeLessThan(60);
    expect(px(40, 234)[1]).toBeGreaterThan(200);
    const small = await sharp(out.previews!.corrected.preview!).metadata();
    expect(small.height! > small.width!).toBe(true);
  });
});
