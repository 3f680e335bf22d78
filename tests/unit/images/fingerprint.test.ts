import { describe, expect, it } from 'vitest';
import { AGEING_MODELS, agePixels, encodeScene, generateScene, type ScenePixels } from '../../../src/lib/demo/synthetic';
import { fingerprint, fingerprintDistance, isSamePicture, SAME_PICTURE_DISTANCE } from '../../../src/lib/images/fingerprint';
import { loadReduced } from '../../../src/lib/restoration/imaging';

// Scenes are the demo's invented ones (src/lib/demo/synthetic.ts). Its full scenes share one layout
// (a face, a grey wedge, colour patches), so a "different picture" here is the open landscape to the
// right of the face (sky, clouds and foliage, drawn from each seed's own noise): another place.
// Near and far are judged by the module's own rule, SAME_PICTURE_DISTANCE, which
// `npm run bench:duplicates` chose on real photographs; the hash is a DCT hash of a grey copy
// (C. Zauner, "Implementation and Benchmarking of Perceptual Image Hash Functions", 2010).

function crop(p: ScenePixels, x0: number, y0: number, w: number, h: number): ScenePixels {
  const data = new Uint8Array(w * h * 3);
  for (let y = 0; y < h; y++) data.set(p.data.subarray(((y0 + y) * p.width + x0) * 3, ((y0 + y) * p.width + x0 + w) * 3), y * w * 3);
  return { data, width: w, height: h, channels: 3 };
}

/** The landscape part of a demo scene: the sky, clouds and foliage right of the face, above the patches. */
function landscape(seed: number): ScenePixels {
  const scene = generateScene({ width: 900, height: 600, seed });
  return crop(scene, 410, 0, 490, 440);
}

/** A white paper border around a picture, as a print scanned whole has (its paper ages with it), with a little scanner noise. */
function withBorder(p: ScenePixels, fraction: number): ScenePixels {
  const b = Math.round(fraction * Math.min(p.width, p.height));
  const width = p.width + 2 * b;
  const height = p.height + 2 * b;
  const data = Uint8Array.from({ length: width * height * 3 }, (_, i) => 240 + ((i * 7919) % 7));
  for (let y = 0; y < p.height; y++) data.set(p.data.subarray(y * p.width * 3, (y + 1) * p.width * 3), ((y + b) * width + b) * 3);
  return { data, width, height, channels: 3 };
}

/** Another exposure of the same negative: every code scaled in linear light by `gain` (IEC 61966-2-1 sRGB curve). */
function expose(p: ScenePixels, gain: number): ScenePixels {
  const dec = (v: number) => (v <= 0.04045 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4));
  const enc = (l: number) => (l <= 0.0031308 ? 12.92 * l : 1.055 * Math.pow(l, 1 / 2.4) - 0.055);
  const lut = Uint8Array.from({ length: 256 }, (_, c) => Math.round(enc(Math.min(1, dec(c / 255) * gain)) * 255));
  return { ...p, data: p.data.map((v) => lut[v]) };
}

/** The fingerprint of a scene as scanned: a JPEG file, decoded as the analysis decodes it. */
async function scanned(p: ScenePixels, quality = 90): Promise<string> {
  return fingerprint(await loadReduced(await encodeScene(p, { format: 'jpeg', quality })));
}

describe('the fingerprint of a scan', () => {
  it('is 32 hexadecimal digits, the same for the same scan', async () => {
    const a = await scanned(landscape(1));
    expect(a).toMatch(/^[0-9a-f]{32}$/);
    expect(await scanned(landscape(1))).toBe(a);
  });

  it('keeps a faded print scan near its fresh print (dark storage, light fading, a yellowed black-and-white print)', async () => {
    for (const seed of [1, 2, 3]) {
      const fresh = landscape(seed);
      const own = await scanned(fresh);
      for (const ageing of [AGEING_MODELS.darkStorage(1), AGEING_MODELS.lightFaded(1)]) {
        const d = fingerprintDistance(own, await scanned(agePixels(fresh, ageing), 85));
        expect(d, `seed ${seed}`).toBeLessThanOrEqual(SAME_PICTURE_DISTANCE);
      }
    }
    const mono = generateScene({ width: 600, height: 400, seed: 4, monochrome: true, border: true });
    expect(isSamePicture(await scanned(mono), await scanned(agePixels(mono, AGEING_MODELS.yellowedMonochrome(1))))).toBe(true);
  });

  it('finds a faded print with a white border from a rescan cropped a few percent with another exposure', async () => {
    for (const seed of [1, 2, 3]) {
      const picture = landscape(seed);
      const print = await scanned(agePixels(withBorder(picture, 0.06), AGEING_MODELS.darkStorage(0.8)), 88);
      // the rescan loses 3 % on the left, 2 % on top, 4 % on the right, 1 % at the bottom
      const x0 = Math.round(0.03 * picture.width);
      const y0 = Math.round(0.02 * picture.height);
      const rescan = await scanned(expose(crop(picture, x0, y0, Math.round(0.96 * picture.width) - x0, Math.round(0.99 * picture.height) - y0), 1.25), 92);
      expect(fingerprintDistance(print, rescan), `seed ${seed}`).toBeLessThanOrEqual(SAME_PICTURE_DISTANCE);
    }
  });

  it('keeps different pictures apart', async () => {
    const prints = await Promise.all([1, 2, 3, 4, 5, 6].map((seed) => scanned(landscape(seed))));
    prints.push(await scanned(generateScene({ width: 600, height: 400, seed: 1, border: true })));
    for (let i = 0; i < prints.length; i++) {
      for (let j = i + 1; j < prints.length; j++) {
        expect(fingerprintDistance(prints[i], prints[j]), `pictures ${i} and ${j}`).toBeGreaterThan(SAME_PICTURE_DISTANCE);
        expect(isSamePicture(prints[i], prints[j])).toBe(false);
      }
    }
  });

  it('reads 16-bit pixels as the same picture as their 8-bit copy', async () => {
    const print = agePixels(withBorder(landscape(2), 0.06), AGEING_MODELS.darkStorage(0.8));
    const deep = { data: Uint16Array.from(print.data, (v) => v * 257), width: print.width, height: print.height, channels: 3, depth: 16 as const };
    expect(fingerprintDistance(fingerprint(deep), fingerprint(print))).toBeLessThanOrEqual(2);
  });

  it('refuses a scan too small to fingerprint and pixel data of the wrong length', () => {
    expect(() => fingerprint(generateScene({ width: 40, height: 40 }))).toThrow(RangeError);
    expect(fingerprint(generateScene({ width: 1280, height: 64 }))).toMatch(/^[0-9a-f]{32}$/);
    expect(() => fingerprint({ data: new Uint8Array(10), width: 100, height: 100, channels: 3 })).toThrow(/pixel data/);
  });

  it('refuses to compare what is not a fingerprint', () => {
    const some = '0123456789abcdef'.repeat(2);
    expect(() => fingerprintDistance('abc', some)).toThrow(RangeError);
    expect(() => fingerprintDistance(`${some.slice(0, 31)}g`, some)).toThrow(RangeError);
    expect(fingerprintDistance('0'.repeat(32), 'f'.repeat(32))).toBe(128);
    expect(fingerprintDistance('0'.repeat(32), `${'0'.repeat(31)}7`)).toBe(3);
    expect(fingerprintDistance(some, some)).toBe(0);
  });
});
