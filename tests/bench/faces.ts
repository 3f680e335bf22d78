/**
 * `npm run bench:faces`: how long finding and describing the faces of one picture takes
 * (src/lib/faces/detect.ts), and the process's memory. Prints figures, asserts nothing.
 *
 * The pictures are the lab's photographs (tests/lab/photos.ts, fetched from Debian's packages) at
 * most 1024 px on the long side (their sources are smaller; the sizes are printed), those with
 * people and a few without, each looked at in colour and on a grey copy, several rounds after a
 * first one that is not counted (the WebAssembly code warming up). Loading the models is timed on
 * its own.
 */
import { performance } from 'node:perf_hooks';
import { findFaces } from '../../src/lib/faces/detect';
import { loadPhoto, PHOTOS, type Photo } from '../lab/photos';

const IDS = ['portrait', 'astronaut', 'friends', 'coffee', 'coins', 'chelsea'];
const ROUNDS = 3;

const mb = (n: number) => (n / 2 ** 20).toFixed(0);
const photos: Photo[] = [];
for (const id of IDS) {
  const src = PHOTOS.find((p) => p.id === id);
  if (src) photos.push(await loadPhoto(src, 1024));
}

const before = process.memoryUsage().rss;
let t = performance.now();
await findFaces({ width: 1, height: 1, data: new Uint8Array(3) });
console.log(`faces_model_load_s: ${((performance.now() - t) / 1000).toFixed(2)}`);

for (const p of photos) await findFaces(p);

let peak = process.memoryUsage().rss;
for (const grey of [false, true]) {
  let seconds = 0;
  let pictures = 0;
  let faces = 0;
  for (let round = 0; round < ROUNDS; round++) {
    for (const p of photos) {
      t = performance.now();
      const found = await findFaces(p, { grey });
      seconds += (performance.now() - t) / 1000;
      pictures++;
      if (round === 0) faces += found.length;
      peak = Math.max(peak, process.memoryUsage().rss);
    }
  }
  const name = grey ? 'grey' : 'colour';
  console.log(`faces_${name}_s_per_picture: ${(seconds / pictures).toFixed(2)}`);
  console.log(`faces_${name}_found_in_${photos.length}_pictures: ${faces}`);
}
console.log(`faces_pictures_px: ${photos.map((p) => `${p.id} ${p.width}x${p.height}`).join(', ')}`);
console.log(`faces_rss_before_models_mb: ${mb(before)}`);
console.log(`faces_rss_peak_mb: ${mb(peak)}`);
console.log(`faces_heap_used_mb: ${mb(process.memoryUsage().heapUsed)}`);
