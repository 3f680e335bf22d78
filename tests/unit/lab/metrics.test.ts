/** The accuracy lab measures with colour code of its own; it must agree with the published references. */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ciede2000, labOf8 } from '../../lab/metrics';
import { decode, encode } from '../../lab/simulator';

describe("the lab's CIEDE2000", () => {
  it('reproduces all 34 pairs of Sharma, Wu & Dalal, Color Res. Appl. 30(1):21-30, 2005, Table 1, to 1e-4', () => {
    const rows = readFileSync(fileURLToPath(new URL('../../fixtures/ciede2000_sharma2005.tsv', import.meta.url)), 'utf8')
      .split('\n')
      .filter((l) => l.trim() && !l.startsWith('#'))
      .map((l) => l.split('\t').map(Number))
      .filter((r) => r.every((v) => Number.isFinite(v)));
    expect(rows.length).toBe(34);
    for (const r of rows) {
      const [L1, a1, b1, L2, a2, b2, want] = r.slice(-7);
      expect(Math.abs(ciede2000([L1, a1, b1], [L2, a2, b2]) - want)).toBeLessThan(1e-4);
    }
  });

  it('puts sRGB white at L* 100 and mid grey (sRGB encode of 0.18, IEC 61966-2-1) at L* 49.4961 (CIE 15:2004)', () => {
    expect(encode(0.18)).toBeCloseTo(0.4613561, 6);
    expect(decode(encode(0.18))).toBeCloseTo(0.18, 9);
    const white = labOf8(255, 255, 255);
    expect(white[0]).toBeCloseTo(100, 6);
    expect(Math.abs(white[1]) + Math.abs(white[2])).toBeLessThan(1e-6);
  });
});
