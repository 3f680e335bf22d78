/**
 * The lab's cases: which photograph, aged how, alone or in a pack. Everything is drawn from fixed
 * seeds, so the same cases come back on every run and every machine.
 */
import type { Category, Part, PhotoSource } from './photos';
import { PHOTOS } from './photos';
import { drawAgeing, jitterAgeing, rng, type Ageing, type AgeingMode } from './simulator';

export interface LabCase {
  name: string;
  photo: PhotoSource;
  part: Part;
  category: Category;
  kind: 'faded' | 'unfaded' | 'pack';
  pack?: string;
  ageing: Ageing;
  seed: number;
}

/** Long side of the lab's prints, in pixels (a 6x4 in print scanned at about 85 dpi). */
export const LAB_SIDE = 512;

const FADED_MODES: AgeingMode[] = ['dark', 'light', 'mixed', 'dark'];
const PACKS_PER_PART = 3;
const PACK_SIZE = 10;

/** Every case of the lab, for one part or both. */
export function labCases(part?: Part): LabCase[] {
  const out: LabCase[] = [];
  PHOTOS.forEach((photo, p) => {
    if (part && photo.part !== part) return;
    const r = rng(1000 + p * 7919);
    const mono = photo.category === 'monochrome';
    const modes: AgeingMode[] = mono ? ['monochrome', 'monochrome', 'monochrome'] : FADED_MODES;
    modes.forEach((mode, k) => {
      const ageing = drawAgeing(r, mode, { border: k % 2 === 0 });
      out.push({ name: `${photo.id}/${mode}-${k}`, photo, part: photo.part, category: photo.category, kind: 'faded', ageing, seed: Math.floor(r() * 2 ** 31) });
    });
    for (let k = 0; k < 2; k++) {
      const ageing = drawAgeing(r, 'none', { border: k === 0 });
      out.push({ name: `${photo.id}/unfaded-${k}`, photo, part: photo.part, category: photo.category, kind: 'unfaded', ageing, seed: Math.floor(r() * 2 ** 31) });
    }
  });
  for (const which of ['dev', 'validation'] as const) {
    if (part && part !== which) continue;
    const pool = PHOTOS.filter((p) => p.part === which && p.category !== 'monochrome');
    for (let n = 0; n < PACKS_PER_PART; n++) {
      const r = rng((which === 'dev' ? 50_000 : 90_000) + n * 104729);
      const mode: AgeingMode = (['dark', 'mixed', 'light'] as const)[n % 3];
      const base = drawAgeing(r, mode, { border: n % 2 === 0 });
      const start = Math.floor(r() * pool.length);
      for (let k = 0; k < PACK_SIZE; k++) {
        const photo = pool[(start + k) % pool.length];
        out.push({ name: `${which}-pack-${n}/${photo.id}`, photo, part: which, category: photo.category, kind: 'pack', pack: `${which}-pack-${n}`, ageing: jitterAgeing(r, base), seed: Math.floor(r() * 2 ** 31) });
      }
    }
  }
  return out;
}
