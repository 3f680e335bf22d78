/**
 * Review workbench benchmark (`npm run bench:review`, run inside tests/bench/with-stack.sh, or on
 * its own with APP_URL pointing at a running stack): prints figures, asserts nothing.
 *
 * First the batch page of a 1,000-print batch (tests/bench/review-batch.ts: load, size, elements,
 * scrolling, page turns, search, the items API), then the print review view below.
 *
 * One generated 3072x2048 faded scan (an invented scene) is uploaded through the API and
 * processed by the real worker; the print review view opens it in Chromium with its 2048 px
 * preview. Measured in the page:
 *  - split drag: requestAnimationFrame intervals while the mouse drags the split line back and
 *    forth (p95), with Konva's own draw time per frame beside it. Floor: the frame interval of the
 *    same page left idle, measured in the same run.
 *  - slider to screen: from setting the strength slider to the first animation frame after the
 *    corrected preview was redrawn (window.__reviewLastPaint, set by the compare view). Floor: the
 *    engine's table build + apply alone on the same 2048 px pixels, in the same page.
 * Targets (issue 5): p95 frame < 20 ms; slider to screen < 50 ms.
 * Ends with `split_drag_p95_ms: <n>` and `slider_to_screen_ms: <n>`.
 */
import { closeDb } from '../../db/index.ts';
import { openDatabase } from '../../src/lib/server/database.ts';
import { AGEING_MODELS, syntheticScan } from '../../src/lib/demo/synthetic.ts';
import { makeArchive, TEST_PASSWORD } from '../support/fixtures.ts';
import { launchBrowser, signInPage } from '../support/browser.ts';
import { Client } from '../support/http.ts';
import { benchBatchPage } from './review-batch.ts';

openDatabase();

const BASE = process.env.APP_URL!;
const DRAG_PASSES = Number(process.env.BENCH_DRAG_PASSES ?? 8);
const SLIDER_CHANGES = Number(process.env.BENCH_SLIDER_CHANGES ?? 30);

const p = (xs: number[], q: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.floor(q * s.length))];
};
const fmt = (x: number) => x.toFixed(1);

async function readyItem(token: string): Promise<string> {
  const client = new Client(token);
  const scan = await syntheticScan({ width: 3072, height: 2048, seed: 5, border: true, ageing: AGEING_MODELS.darkStorage(0.8), format: 'jpeg', quality: 92 });
  const b = await client.post('/api/batches', { name: `Bench ${Date.now()}`, sourceKind: 'drawer' });
  if (b.status !== 201) throw new Error(`creating a batch answered ${b.status}: ${b.text}`);
  const up = await client.request('POST', `/api/batches/${b.body.id}/files`, { body: new Uint8Array(scan), headers: { 'content-type': 'application/octet-stream', 'x-file-name': 'bench-print.jpg' } });
  if (up.status !== 201) throw new Error(`upload answered ${up.status}: ${up.text}`);
  const id = up.body.item.id as string;
  const deadline = Date.now() + 180_000;
  while (Date.now() < deadline) {
    const r = await client.get(`/api/items/${id}`);
    if (r.body?.item?.state === 'ready') return id;
    if (r.body?.item?.state === 'failed') throw new Error(`the scan failed: ${r.body.item.failureReason}`);
    await new Promise((res) => setTimeout(res, 300));
  }
  throw new Error('the scan was not ready in time');
}

async function main() {
  const archive = await makeArchive('bench-review');
  // BENCH_REVIEW_PART=batch measures only the batch page of a large batch, =print only the print review view
  const part = process.env.BENCH_REVIEW_PART ?? 'all';
  if (part !== 'print') await benchBatchPage(archive);
  if (part === 'batch') {
    await closeDb();
    return;
  }
  const itemId = await readyItem(archive.editor.token);
  const browser = await launchBrowser({ viewport: { width: 1600, height: 1000 } });
  try {
    const page = await browser.newPage();
    // tsx keeps function names with a __name helper that does not exist inside the page
    await page.addInitScript('window.__name = (f) => f');
    await signInPage(page, archive.editor.email, TEST_PASSWORD);
    await page.goto(`${BASE}/items/${itemId}`);
    await page.waitForSelector('[data-compare-view][data-loaded="yes"]', { timeout: 60_000 });
    const previewSide = await page.evaluate(() => {
      const k = (window as unknown as { Konva: any }).Konva;
      const img = k.stages[0].find('Image')[0].image() as HTMLCanvasElement;
      return Math.max(img.width, img.height);
    });
    console.log(`preview long side: ${previewSide} px`);

    // recorders in the page: animation-frame timestamps and Konva's draw time of every layer
    await page.evaluate(() => {
      const w = window as unknown as { Konva: any; __frames: number[]; __draws: number[]; __recording: boolean };
      w.__frames = [];
      w.__draws = [];
      w.__recording = false;
      const tick = (t: number) => {
        if (w.__recording) w.__frames.push(t);
        requestAnimationFrame(tick);
      };
      requestAnimationFrame(tick);
      for (const layer of w.Konva.stages[0].getLayers()) {
        let start = 0;
        layer.on('beforeDraw', () => (start = performance.now()));
        layer.on('draw', () => w.__recording && w.__draws.push(performance.now() - start));
      }
    });
    const intervals = (ts: number[]) => ts.slice(1).map((t, i) => t - ts[i]);
    const record = async (on: boolean) => page.evaluate((v) => {
      const w = window as unknown as { __frames: number[]; __draws: number[]; __recording: boolean };
      if (v) {
        w.__frames = [];
        w.__draws = [];
      }
      w.__recording = v;
      return { frames: w.__frames, draws: w.__draws };
    }, on);

    // floor: the idle page's own frame interval
    await record(true);
    await page.waitForTimeout(1500);
    const idle = intervals((await record(false)).frames);

    const box = (await page.locator('[data-compare-view]').boundingBox())!;
    const y = box.y + box.height * 0.3;
    const left = box.x + box.width * 0.15;
    const right = box.x + box.width * 0.85;
    await page.mouse.move(box.x + box.width / 2, y);
    await page.mouse.down();
    await record(true);
    for (let i = 0; i < DRAG_PASSES; i++) await page.mouse.move(i % 2 === 0 ? left : right, y, { steps: 90 });
    const drag = await record(false);
    await page.mouse.up();
    const dragFrames = intervals(drag.frames);

    // slider to screen
    const slider = await page.evaluate(async (n) => {
      const input = document.querySelector<HTMLInputElement>('#adj-strength')!;
      const setter = Object.getOwnPropertyDescriptor(HTMLInputElement.prototype, 'value')!.set!;
      const w = window as unknown as { __reviewLastPaint?: number };
      const times: number[] = [];
      for (let i = 0; i < n; i++) {
        await new Promise((r) => requestAnimationFrame(() => setTimeout(r, 20)));
        const t0 = performance.now();
        // consecutive values always differ: even steps in 0.62-0.71, odd steps in 0.81-0.90
        setter.call(input, (i % 2 === 0 ? 0.62 + (i % 10) * 0.01 : 0.9 - (i % 10) * 0.01).toFixed(2));
        input.dispatchEvent(new Event('input', { bubbles: true }));
        const painted = await new Promise<number>((resolve) => {
          const check = () => ((w.__reviewLastPaint ?? 0) > t0 ? resolve(w.__reviewLastPaint!) : performance.now() - t0 > 5000 ? resolve(t0 + 5000) : requestAnimationFrame(check));
          check();
        });
        times.push(painted - t0);
      }
      return times;
    }, SLIDER_CHANGES);

    // floor for the slider: the engine's own per-pixel work on the same preview pixels, in this page
    const applyFloor = await page.evaluate(() => {
      const k = (window as unknown as { Konva: any }).Konva;
      const src = k.stages[0].find('Image')[0].image() as HTMLCanvasElement;
      const data = src.getContext('2d')!.getImageData(0, 0, src.width, src.height).data;
      const out = new Uint8ClampedArray(data.length);
      const times: number[] = [];
      // the same loop the engine's applyCorrection runs, with a fresh 256-entry table per channel
      for (let n = 0; n < 10; n++) {
        const t0 = performance.now();
        const lut = new Uint8Array(256).map((_, i) => Math.round(255 * Math.pow(i / 255, 0.9 + n * 0.01)));
        for (let i = 0; i < data.length; i += 4) {
          out[i] = lut[data[i]];
          out[i + 1] = lut[data[i + 1]];
          out[i + 2] = lut[data[i + 2]];
          out[i + 3] = data[i + 3];
        }
        times.push(performance.now() - t0);
      }
      return times;
    });

    // full size: one scan pixel per screen pixel loads the visible region of the 3072 px scan at full resolution
    const t1 = Date.now();
    await page.keyboard.press('1');
    await page.waitForSelector('[data-compare-view][data-hires="yes"]', { timeout: 30_000 });
    const fullSizeMs = Date.now() - t1;

    console.log(`full_size_region_ms: ${fullSizeMs} (key 1 to the full-resolution region on screen, incl. the ${250} ms settle delay)`);
    console.log(`idle_frame_p95_ms: ${fmt(p(idle, 0.95))} (floor: the page's own frame interval, ${idle.length} frames)`);
    console.log(`split drag: ${dragFrames.length} frames, median ${fmt(p(dragFrames, 0.5))} ms, p95 ${fmt(p(dragFrames, 0.95))} ms, max ${fmt(Math.max(...dragFrames))} ms`);
    console.log(`split_draw_p95_ms: ${fmt(p(drag.draws, 0.95))} (Konva draw time per layer redraw, ${drag.draws.length} draws)`);
    console.log(`slider: ${slider.length} changes, median ${fmt(p(slider, 0.5))} ms, p95 ${fmt(p(slider, 0.95))} ms`);
    console.log(`preview_apply_floor_ms: ${fmt(p(applyFloor, 0.5))} (bare table apply over the ${previewSide} px preview in the page)`);
    console.log(`targets: split drag p95 < 20 ms; slider to screen < 50 ms`);
    console.log(`split_drag_p95_ms: ${fmt(p(dragFrames, 0.95))}`);
    console.log(`slider_to_screen_ms: ${fmt(p(slider, 0.95))}`);
  } finally {
    await browser.close();
    await closeDb();
  }
}

await main();
