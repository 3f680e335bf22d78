/**
 * `npm run bench:backs`: how well the backs of prints are recognised, paired and read. Prints
 * figures as `name: value` lines, asserts nothing.
 *
 * Generated cases, all seeded (tests/support/back-scans.ts, invented): 32 backs at 1200×800, a
 * scan of a 6×4 inch print at 200 dpi, on white to cream paper with texture: 8 with a lab's imprint
 * (an invented lab name, a month and year, an order number) in one of four fonts, 8 with a rotated
 * handwritten-style line and a written year, 8 with both, 8 blank. Each is fed after a front (the
 * demo's invented scenes, faded) as a scanner that scans both sides writes them.
 *
 * - backs_recognised_share: backs the recognition (src/lib/backs/paper-back.ts) takes for backs;
 *   fronts_taken_for_backs: fronts it takes for backs;
 * - pairing_right_share: backs paired with the front fed just before them (src/lib/backs/pairing.ts);
 * - dates_read_share: of the backs carrying a date, those whose date the text recognition
 *   (tesseract.js, English data from node_modules) and src/lib/backs/back-dates.ts read right
 *   (the imprint's month and year where there is one, else the written year);
 *   stamp_dates_read_share: the same for the backs with an imprint;
 * - ocr_ms_per_back: the reading's mean time per back, its engine started before the first;
 *   ocr_start_ms: starting the engine and loading the English data once.
 */
import sharp from 'sharp';
import { dateOnBack } from '../../src/lib/backs/back-dates.ts';
import { pairBacks, type FedScan } from '../../src/lib/backs/pairing.ts';
import { measureBack } from '../../src/lib/backs/paper-back.ts';
import { AGEING_MODELS, syntheticScan } from '../../src/lib/demo/synthetic.ts';
import { closeTextReader, readBackText } from '../../src/lib/server/back-text.ts';
import { generatedBack, type BackMarks } from '../support/back-scans.ts';

const KINDS: BackMarks[] = ['stamp', 'handwriting', 'both', 'blank'];
const PER_KIND = 8;
const SIZE = { width: 1200, height: 800 };

async function looksLikeBack(bytes: Buffer): Promise<boolean> {
  const { data, info } = await sharp(bytes).removeAlpha().raw().toBuffer({ resolveWithObject: true });
  return measureBack(data, info.width, info.height, info.channels).back;
}

const line = (name: string, value: number | string) => console.log(`${name}: ${typeof value === 'number' ? (Number.isInteger(value) ? value : value.toFixed(3)) : value}`);

const fed: FedScan[] = [];
const cases: { marks: BackMarks; bytes: Buffer; date: string | null; backId: string; frontId: string }[] = [];
let recognised = 0;
let frontsAsBacks = 0;
for (let n = 0; n < KINDS.length * PER_KIND; n++) {
  const marks = KINDS[n % KINDS.length];
  const back = await generatedBack(marks, 100 + n, SIZE);
  const front = await syntheticScan({ ...SIZE, seed: 900 + n, border: n % 2 === 0, ageing: AGEING_MODELS.darkStorage(0.8), format: 'jpeg', quality: 90 });
  const frontLooks = await looksLikeBack(front);
  const backLooks = await looksLikeBack(back.bytes);
  if (backLooks) recognised++;
  if (frontLooks) frontsAsBacks++;
  fed.push({ id: `f${n}`, seq: 2 * n + 1, name: `scan_${String(2 * n + 1).padStart(4, '0')}.jpg`, looksLikeBack: frontLooks });
  fed.push({ id: `b${n}`, seq: 2 * n + 2, name: `scan_${String(2 * n + 2).padStart(4, '0')}.jpg`, looksLikeBack: backLooks });
  cases.push({ marks, bytes: back.bytes, date: back.date, backId: `b${n}`, frontId: `f${n}` });
}
const pairs = pairBacks(fed).pairs;
const right = cases.filter((c) => pairs.some((p) => p.backId === c.backId && p.frontId === c.frontId)).length;

const started = performance.now();
await readBackText((await generatedBack('blank', 1, { width: 600, height: 400 })).bytes);
const startMs = performance.now() - started;

let readMs = 0;
let dated = 0;
let datesRead = 0;
let stamped = 0;
let stampsRead = 0;
for (const c of cases) {
  const t0 = performance.now();
  const { text } = await readBackText(c.bytes);
  readMs += performance.now() - t0;
  if (!c.date) continue;
  const ok = dateOnBack(text)?.edtf === c.date;
  dated++;
  if (ok) datesRead++;
  if (c.marks === 'stamp' || c.marks === 'both') {
    stamped++;
    if (ok) stampsRead++;
  }
}
await closeTextReader();

line('backs', cases.length);
line('backs_recognised_share', recognised / cases.length);
line('fronts_taken_for_backs', frontsAsBacks);
line('pairing_right_share', right / cases.length);
line('dates_read_share', datesRead / dated);
line('stamp_dates_read_share', stampsRead / stamped);
line('ocr_ms_per_back', Math.round(readMs / cases.length));
line('ocr_start_ms', Math.round(startMs));
