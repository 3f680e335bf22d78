/**
 * Scans of the same picture, generated (used by `npm run bench:duplicates` and the same-picture
 * tests): a lab photograph (tests/lab/photos.ts, fetched from Debian's packages) as a faded print
 * scan through the lab's ageing simulator, and as a clean rescan from the negative, cropped 1-5 %
 * on each side with another exposure. Seeded: the same seed gives the same bytes.
 */
import { encodePixels } from '../../src/lib/restoration/imaging.ts';
import type { Photo } from '../lab/photos.ts';
import { agePhoto, decode, drawAgeing, encode, rng, type AgeingMode } from '../lab/simulator.ts';
import type { Client } from './http.ts';
import { upload, waitSettled } from './scans.ts';

export const AGEING_MODES: AgeingMode[] = ['none', 'dark', 'light', 'mixed', 'monochrome'];

/** A part of a photograph. */
export function cropPixels(photo: Photo, x0: number, y0: number, w: number, h: number): Photo {
  const data = new Uint8Array(w * h * 3);
  for (let y = 0; y < h; y++) data.set(photo.data.subarray(((y0 + y) * photo.width + x0) * 3, ((y0 + y) * photo.width + x0 + w) * 3), y * w * 3);
  return { id: photo.id, width: w, height: h, data };
}

/** Another exposure: a gain and a gamma in linear light, by table. */
export function expose(photo: Photo, gain: number, gamma: number): Photo {
  const lut = Uint8Array.from({ length: 256 }, (_, c) => Math.round(Math.min(1, encode(Math.min(1, Math.pow(decode(c / 255), gamma) * gain))) * 255));
  return { ...photo, data: photo.data.map((v) => lut[v]) };
}

/** The photograph as a faded print's scan: an ageing of `mode` drawn from `seed`, JPEG at the drawn quality. */
export async function fadedScan(photo: Photo, seed: number, mode: AgeingMode): Promise<Buffer> {
  const a = drawAgeing(rng(seed), mode);
  const print = agePhoto(photo, a, seed);
  return encodePixels({ data: print.aged, width: print.width, height: print.height }, { format: 'jpeg', quality: a.jpegQuality });
}

/** The photograph as a clean rescan from its negative: cropped 1-5 % on each side, gain 0.75-1.3, gamma 0.85-1.15, JPEG q80-95, drawn from `next`. */
export async function cleanRescan(photo: Photo, next: () => number): Promise<Buffer> {
  const uniform = (a: number, b: number) => a + (b - a) * next();
  const [l, t, rt, b] = [0, 0, 0, 0].map(() => uniform(0.01, 0.05));
  const x0 = Math.round(l * photo.width);
  const y0 = Math.round(t * photo.height);
  const cropped = cropPixels(photo, x0, y0, Math.round(photo.width * (1 - rt)) - x0, Math.round(photo.height * (1 - b)) - y0);
  const exposed = expose(cropped, uniform(0.75, 1.3), uniform(0.85, 1.15));
  return encodePixels(exposed, { format: 'jpeg', quality: Math.round(uniform(80, 95)) });
}

/** A batch made through the API (uploaded as rescans when asked) with these scans, every print analysed; their ids in upload order. */
export async function batchOfScans(client: Client, name: string, scans: { name: string; bytes: Buffer }[], holdsRescans = false): Promise<{ batchId: string; ids: string[] }> {
  const created = await client.post('/api/batches', { name, sourceKind: 'box', sourceLabel: 'Test shoebox', holdsRescans });
  if (created.status !== 201) throw new Error(`creating a batch answered ${created.status}: ${created.text}`);
  const ids: string[] = [];
  for (const s of scans) {
    const r = await upload(client, created.body.id, s.name, s.bytes);
    if (r.status !== 201) throw new Error(`uploading ${s.name} answered ${r.status}: ${r.text}`);
    ids.push(r.body.item.id);
  }
  await waitSettled(client, created.body.id);
  return { batchId: created.body.id, ids };
}
