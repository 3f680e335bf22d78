/**
 * Mean CIEDE2000 difference of two 8-bit sRGB pixel buffers of the same size, on every fifth
 * pixel (the engine's own CIEDE2000, checked against Sharma, Wu & Dalal 2005 in colour.test.ts).
 */
import { deltaE2000, srgbToLab } from '../../src/lib/restoration/colour';

export function meanDeltaE(a: Uint8Array, b: Uint8Array): number {
  let sum = 0;
  let n = 0;
  for (let i = 0; i < a.length; i += 3 * 5) {
    sum += deltaE2000(srgbToLab([a[i] / 255, a[i + 1] / 255, a[i + 2] / 255]), srgbToLab([b[i] / 255, b[i + 1] / 255, b[i + 2] / 255]));
    n++;
  }
  return sum / n;
}
