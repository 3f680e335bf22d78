/**
 * `npm run bench:duplicates`: does the perceptual fingerprint (src/lib/images/fingerprint.ts) find a
 * picture's other scan? Prints figures, asserts nothing.
 *
 * Generated cases, all seeded:
 *  - 30 of the accuracy lab's photographs (tests/lab/photos.ts, fetched from Debian's packages) as
 *    faded print scans: the lab's ageing simulator (any mode, half with a white border), JPEG q85-95;
 *  - of each, two clean rescans (as from the negative): the photograph cropped 1-5 % on each side,
 *    another exposure (gain 0.75-1.3 and gamma 0.85-1.15 in linear light), another size, JPEG q80-95;
 *  - 500 unrelated scans: 400 crops (30-90 % of each side, anywhere) of the lab's other photographs,
 *    half of them aged, and 100 of the demo's synthetic scenes (src/lib/demo/synthetic.ts), aged or not
 *    (they share one invented layout, so they are near one another; only their distance to the
 *    photographs' scans counts here).
 * Each scan is decoded as the analysis decodes it (loadReduced) and fingerprinted from those pixels.
 *
 * A rescan is matched when its nearest scan among the faded prints and the unrelated scans is its
 * own print, within SAME_PICTURE_DISTANCE. A false match is a scan shown another scan as the same
 * picture: a rescan with any other scan within the distance, or an unrelated scan with any faded
 * print within it; false_match_share is their share of all those queries (rescans and unrelated).
 * Also printed: the same shares at other distances (to choose the rule), the spread of distances,
 * and the fingerprint's time per scan on the lab's copies and on a 1280 px analysis copy.
 * Then the look-up as the product makes it, in PostgreSQL over an archive of 10 000 prints (the
 * faded prints' fingerprints among random ones), each rescan asked for once, against the floor of
 * one pass counting the same prints (tests/bench/duplicates-lookup.ts).
 * Set DUPLICATES_CASES_DIR to also write every case as a JPEG with a manifest.json (to measure
 * another fingerprint on the very same files).
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { AGEING_MODELS, agePixels, generateScene } from '../../src/lib/demo/synthetic';
import { fingerprint, fingerprintDistance, SAME_PICTURE_DISTANCE } from '../../src/lib/images/fingerprint';
import { encodePixels, loadReduced } from '../../src/lib/restoration/imaging';
import { loadPhoto, PHOTOS, type Photo } from '../lab/photos';
import { rng } from '../lab/simulator';
import { AGEING_MODES, cleanRescan, cropPixels, expose, fadedScan } from '../support/same-picture-scans';
import { measureLookup } from './duplicates-lookup';

const PRINTS = 30;
const RESCANS_PER_PRINT = 2;
const UNRELATED_CROPS = 400;
const UNRELATED_SYNTHETIC = 100;
const SIDE = 512;

const r = rng(20261203);
const uniform = (a: number, b: number) => a + (b - a) * r();
const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];

interface Scan {
  id: string;
  /** Which picture it shows (the photograph's id for prints and rescans). */
  picture: string;
  kind: 'print' | 'rescan' | 'unrelated';
  jpeg: Buffer;
  hash?: string;
}

async function faded(photo: Photo, seed: number): Promise<Buffer> {
  return fadedScan(photo, seed, pick(AGEING_MODES));
}

async function cases(): Promise<Scan[]> {
  const order = PHOTOS.map((p, i) => ({ p, k: rng(i + 1)() })).sort((a, b) => a.k - b.k).map((x) => x.p);
  const targets = order.slice(0, PRINTS);
  const others = order.slice(PRINTS);
  const scans: Scan[] = [];
  for (const [i, src] of targets.entries()) {
    const photo = await loadPhoto(src, SIDE);
    scans.push({ id: `print-${src.id}`, picture: src.id, kind: 'print', jpeg: await faded(photo, 1000 + i) });
    for (let k = 0; k < RESCANS_PER_PRINT; k++) {
      scans.push({ id: `rescan-${src.id}-${k}`, picture: src.id, kind: 'rescan', jpeg: await cleanRescan(photo, r) });
    }
  }
  const photos = await Promise.all(others.map((src) => loadPhoto(src, SIDE)));
  for (let i = 0; i < UNRELATED_CROPS; i++) {
    const photo = photos[i % photos.length];
    const w = Math.round(photo.width * uniform(0.3, 0.9));
    const h = Math.round(photo.height * uniform(0.3, 0.9));
    const crop = cropPixels(photo, Math.floor(r() * (photo.width - w)), Math.floor(r() * (photo.height - h)), w, h);
    const jpeg = r() < 0.5 ? await faded(crop, 5000 + i) : await encodePixels(expose(crop, uniform(0.8, 1.2), uniform(0.9, 1.1)), { format: 'jpeg', quality: 90 });
    scans.push({ id: `crop-${photo.id}-${i}`, picture: `crop-${photo.id}-${i}`, kind: 'unrelated', jpeg });
  }
  const ageings = [AGEING_MODELS.none(), AGEING_MODELS.darkStorage(uniform(0.3, 1)), AGEING_MODELS.lightFaded(uniform(0.3, 1))];
  for (let i = 0; i < UNRELATED_SYNTHETIC; i++) {
    const monochrome = r() < 0.15;
    const scene = generateScene({ width: 480, height: 320, seed: 300 + i, border: r() < 0.5, monochrome });
    const aged = agePixels(scene, monochrome ? AGEING_MODELS.yellowedMonochrome(uniform(0.3, 1)) : pick(ageings));
    scans.push({ id: `synthetic-${i}`, picture: `synthetic-${i}`, kind: 'unrelated', jpeg: await encodePixels(aged, { format: 'jpeg', quality: 90 }) });
  }
  return scans;
}

const scans = await cases();
const timings: number[] = [];
for (const s of scans) {
  const pixels = await loadReduced(s.jpeg);
  const t0 = performance.now();
  s.hash = fingerprint(pixels);
  timings.push(performance.now() - t0);
}
const big = generateScene({ width: 1280, height: 853, seed: 9 });
const bigTimes: number[] = [];
for (let i = 0; i < 5; i++) {
  const t0 = performance.now();
  fingerprint(big);
  bigTimes.push(performance.now() - t0);
}

const dir = process.env.DUPLICATES_CASES_DIR;
if (dir) {
  mkdirSync(dir, { recursive: true });
  for (const s of scans) writeFileSync(join(dir, `${s.id}.jpg`), s.jpeg);
  writeFileSync(join(dir, 'manifest.json'), JSON.stringify(scans.map(({ id, picture, kind }) => ({ id, picture, kind }))));
}

const prints = scans.filter((s) => s.kind === 'print');
const rescans = scans.filter((s) => s.kind === 'rescan');
const unrelated = scans.filter((s) => s.kind === 'unrelated');
const gallery = [...prints, ...unrelated];
const d = (a: Scan, b: Scan) => fingerprintDistance(a.hash!, b.hash!);

/** The shares at one distance rule. */
function shares(limit: number): { matched: number; falseMatch: number } {
  let matched = 0;
  let falseQueries = 0;
  for (const q of rescans) {
    const own = prints.find((p) => p.picture === q.picture)!;
    const ownD = d(q, own);
    const wrong = gallery.filter((g) => g !== own).map((g) => d(q, g));
    const nearestWrong = Math.min(...wrong);
    if (ownD <= limit && ownD < nearestWrong) matched++;
    if (nearestWrong <= limit) falseQueries++;
  }
  for (const q of unrelated) if (prints.some((p) => d(q, p) <= limit)) falseQueries++;
  return { matched: matched / rescans.length, falseMatch: falseQueries / (rescans.length + unrelated.length) };
}

const quantile = (xs: number[], q: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.floor(q * s.length))];
};
const sameDistances = rescans.map((q) => d(q, prints.find((p) => p.picture === q.picture)!));
const otherDistances = rescans.flatMap((q) => gallery.filter((g) => g.picture !== q.picture).map((g) => d(q, g)));
const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;

const main = shares(SAME_PICTURE_DISTANCE);
console.log(`prints: ${prints.length}`);
console.log(`rescans: ${rescans.length}`);
console.log(`unrelated_scans: ${unrelated.length}`);
console.log(`same_picture_distance: ${SAME_PICTURE_DISTANCE}`);
console.log(`rescans_matched_share: ${main.matched.toFixed(3)}`);
console.log(`false_match_share: ${main.falseMatch.toFixed(4)}`);
for (const limit of [32, 36, 38, 40, 42, 44, 48]) {
  const s = shares(limit);
  console.log(`rescans_matched_share_at_${limit}: ${s.matched.toFixed(3)}`);
  console.log(`false_match_share_at_${limit}: ${s.falseMatch.toFixed(4)}`);
}
console.log(`same_picture_distance_median: ${quantile(sameDistances, 0.5)}`);
console.log(`same_picture_distance_p95: ${quantile(sameDistances, 0.95)}`);
console.log(`same_picture_distance_max: ${Math.max(...sameDistances)}`);
console.log(`other_picture_distance_p001: ${quantile(otherDistances, 0.001)}`);
console.log(`other_picture_distance_min: ${Math.min(...otherDistances)}`);
console.log(`fingerprint_ms: ${mean(timings).toFixed(2)}`);
console.log(`fingerprint_ms_1280px: ${Math.min(...bigTimes).toFixed(2)}`);

// The same look-up in the database, across an archive of 10 000 prints (tests/bench/duplicates-lookup.ts).
const lookup = await measureLookup(
  prints.map((p) => p.hash!),
  rescans.map((q) => ({ fingerprint: q.hash!, expect: prints.findIndex((p) => p.picture === q.picture) })),
);
console.log(`lookup_prints: ${lookup.prints}`);
console.log(`lookup_plan: ${lookup.plan}`);
console.log(`lookup_ms_10000: ${lookup.lookupMs.toFixed(2)}`);
console.log(`lookup_floor_count_ms_10000: ${lookup.floorCountMs.toFixed(2)}`);
console.log(`lookup_floor_round_trip_ms: ${lookup.floorRoundTripMs.toFixed(2)}`);
console.log(`lookup_over_count_floor: ${(lookup.lookupMs / lookup.floorCountMs).toFixed(2)}`);
console.log(`lookup_rescans_found_share: ${lookup.foundShare.toFixed(3)}`);
