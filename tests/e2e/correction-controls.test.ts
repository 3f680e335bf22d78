/**
 * The adjust panel's newer controls in Chromium, on scans processed by the real worker: black
 * point, contrast, a channel curve, a quarter turn and a crop change the live preview; saved, the
 * server's full-size render matches what the browser showed within 1 ΔE00; the saved correction is
 * used on chosen prints of the batch; a viewer sees no editing controls.
 */
import sharp from 'sharp';
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../db/index.ts';
import { ciede2000, labOf8 } from '../lab/metrics.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE, type Client } from '../support/http.ts';
import { until } from '../support/until.ts';
import { fadedScans, readyBatch, waitRendered } from '../integration/review/helpers.ts';

let archive: TestArchive;
let editor: Client;
let browser: BrowserContext;
let page: Page;
let items: { id: string; seq: number }[];

beforeAll(async () => {
  archive = await makeArchive('controls-e2e');
  editor = asToken(archive.editor);
  ({ items } = await readyBatch(editor, 'Sheet-fed sitting, sideways', await fadedScans(4, 81, { width: 1500, height: 1000 })));
  browser = await launchBrowser();
  page = await browser.newPage();
  // what the page itself reports goes into the test's output, to read beside a failure
  page.on('pageerror', (e) => console.log(`page error: ${e.message}`));
  page.on('console', (m) => m.type() === 'error' && console.log(`page console: ${m.text()}`));
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
}, 300_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

const detail = async (id: string) => (await editor.get(`/api/items/${id}`)).body.item;

/**
 * The corrected print as drawn on screen, and where: the drawn pixels of the image layer inside
 * the corrected image and the frame (side by side: the right half; split at 0: all of it).
 */
async function drawnCorrected(p: Page, summaryOnly = false) {
  return p.evaluate((summaryOnly) => {
    const view = document.querySelector<HTMLElement>('[data-compare-view]')!;
    const [x, y, w, h] = view.dataset.correctedBox!.split(',').map(Number);
    const canvas = view.querySelector('canvas')!;
    const ratio = canvas.width / canvas.getBoundingClientRect().width;
    // whole pixels inside the drawn image, one pixel in from each edge, and inside the canvas
    const x0 = Math.max(Math.ceil(x * ratio) + 1, 1);
    const y0 = Math.max(Math.ceil(y * ratio) + 1, 1);
    const x1 = Math.min(Math.floor((x + w) * ratio) - 2, canvas.width - 1);
    const y1 = Math.min(Math.floor((y + h) * ratio) - 2, canvas.height - 1);
    const box = { x: x0, y: y0, w: x1 - x0, h: y1 - y0 };
    const d = canvas.getContext('2d')!.getImageData(box.x, box.y, box.w, box.h).data;
    let sum = 0;
    for (let i = 0; i < d.length; i += 7) sum = (sum * 31 + d[i]) % 1_000_000_007;
    return { box, imageBox: { x: x * ratio, y: y * ratio, w: w * ratio, h: h * ratio }, sum, rgba: summaryOnly ? [] : Array.from(d) };
  }, summaryOnly);
}

/** Waits until two frames in a row draw the same corrected pixels where `ready` holds, then reads them. */
async function settledCorrected(p: Page, what: string, ready: (shot: Awaited<ReturnType<typeof drawnCorrected>>) => boolean) {
  let last = '';
  await until(what, async () => {
    await p.evaluate(() => new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r))));
    const shot = await drawnCorrected(p, true);
    const key = JSON.stringify([shot.box, shot.sum]);
    const same = ready(shot) && key === last;
    last = key;
    return same;
  });
  return drawnCorrected(p);
}

/** Mean colour of each `block` x `block` square of interleaved pixels (`channels` a pixel), to whole code values. */
function blockMeans(data: ArrayLike<number>, width: number, height: number, channels: number, block: number): number[][] {
  const out: number[][] = [];
  for (let by = 0; by + block <= height; by += block) {
    for (let bx = 0; bx + block <= width; bx += block) {
      const s = [0, 0, 0];
      for (let y = by; y < by + block; y++) for (let x = bx; x < bx + block; x++) for (let k = 0; k < 3; k++) s[k] += data[(y * width + x) * channels + k];
      out.push(s.map((v) => Math.round(v / (block * block))));
    }
  }
  return out;
}

describe('the newer correction controls in the browser', () => {
  it('change the live preview: black point, contrast, a curve, a quarter turn and a crop', async () => {
    await page.goto(`${BASE}/items/${items[0].id}`);
    await page.waitForSelector('[data-compare-view][data-loaded="yes"]');
    expect(await page.getAttribute('[data-compare-view]', 'data-framed-size')).toBe('1500x1000');
    const before = await drawnCorrected(page, true);

    await page.locator('#adj-black').fill('0.06');
    await page.locator('#adj-contrast').fill('1.2');
    await page.getByRole('radio', { name: /Green/ }).check();
    await page.locator('#adj-curve-1').fill('0.56');
    await page.waitForSelector('[data-dirty="yes"]');
    expect(await page.locator('#adj-curve-1').inputValue()).toBe('0.56');
    await page.click('[data-turn="right"]');
    await page.waitForSelector('[data-framing-controls] [data-turns="1"]');
    await page.locator('[data-trim="top"]').fill('4');
    await page.locator('[data-trim="left"]').fill('3');
    // a quarter turn of 1500 x 1000 is 1000 x 1500; 3 % off the left and 4 % off the top
    await page.waitForSelector('[data-compare-view][data-framed-size="970x1440"]');
    await until('the turned preview to be drawn', async () => {
      const after = await drawnCorrected(page, true);
      // fitted by its height both times, the drawn print is narrower than it was and taller than wide
      return after.imageBox.h > after.imageBox.w && after.imageBox.w < before.imageBox.w - 10;
    });
    await snap(page, 'controls-01-adjusted');
  });

  it("saves them, and the server's render matches the preview drawn in Chromium within 1 ΔE00", async () => {
    await page.click('[data-save-correction]');
    await page.waitForSelector('[data-dirty="no"]');
    const saved = await detail(items[0].id);
    expect(saved.current).toMatchObject({ contrast: 1.2, blackPoint: [0.06, 0.06, 0.06], geometry: { quarterTurns: 1, crop: { x: 0.03, y: 0.04 } } });
    expect(saved.current.toneCurves.green[2]).toEqual([0.5, 0.56]);
    await waitRendered(editor, items[0].id, saved.currentVersion);

    // side by side: the whole corrected print is drawn in the right half
    await page.click('[data-toggle-layout]');
    await page.waitForSelector('[data-compare-view][data-layout="side"]');
    const drawn = await settledCorrected(page, 'the side-by-side view to settle', () => true);
    await snap(page, 'controls-02-side-by-side');

    const res = await fetch(`${BASE}/api/items/${items[0].id}/corrected`, { headers: { authorization: `Bearer ${archive.editor.token}` } });
    expect(res.status).toBe(200);
    const jpeg = Buffer.from(await res.arrayBuffer());
    const meta = await sharp(jpeg).metadata();
    expect([meta.width, meta.height]).toEqual([970, 1440]);
    // the render brought to the size it is drawn at, then the same pixels as the screen's
    const sameSquares = async (shot: typeof drawn, block: number, label: string) => {
      const { imageBox, box } = shot;
      const scaled = await sharp(jpeg).resize(Math.round(imageBox.w), Math.round(imageBox.h), { fit: 'fill', kernel: 'linear' }).removeAlpha().raw().toBuffer({ resolveWithObject: true });
      const ox = box.x - Math.round(imageBox.x);
      const oy = box.y - Math.round(imageBox.y);
      const server = new Uint8Array(box.w * box.h * 3);
      for (let y = 0; y < box.h; y++) for (let x = 0; x < box.w; x++) {
        const s = ((y + oy) * scaled.info.width + (x + ox)) * 3;
        server.set(scaled.data.subarray(s, s + 3), (y * box.w + x) * 3);
      }
      // colour compared over squares: the browser's drawing and libvips' resize place edges
      // differently by a fraction of a pixel, which is not a colour difference
      const a = blockMeans(shot.rgba, box.w, box.h, 4, block);
      const b = blockMeans(server, box.w, box.h, 3, block);
      // CIEDE2000 of the lab (tests/lab/metrics.ts, checked against Sharma, Wu & Dalal 2005, Table 1)
      const d = a.map((p, i) => ciede2000(labOf8(p[0], p[1], p[2]), labOf8(b[i][0], b[i][1], b[i][2]))).sort((x, y) => x - y);
      const mean = d.reduce((s, x) => s + x, 0) / d.length;
      console.log(`preview drawn in Chromium vs server render, ${label}: ${d.length} squares of ${block} px, mean ΔE00 ${mean.toFixed(3)}, median ${d[d.length >> 1].toFixed(3)}, p95 ${d[Math.floor(d.length * 0.95)].toFixed(3)}, max ${d.at(-1)!.toFixed(3)}`);
      return { a, b, d, mean };
    };
    const { a, b, d, mean } = await sameSquares(drawn, 8, 'whole print fitted');
    expect(d.length).toBeGreaterThan(1000);
    expect(mean).toBeLessThan(1);
    // and the comparison can fail: the same render with a cast a person would see (red up and blue
    // down by 12 code values) is far outside the tolerance
    const drawnLab = a.map((p) => labOf8(p[0], p[1], p[2]));
    const cast = b.map((p) => labOf8(Math.min(255, p[0] + 12), p[1], Math.max(0, p[2] - 12)));
    expect(drawnLab.reduce((s, l, i) => s + ciede2000(l, cast[i]), 0) / d.length).toBeGreaterThan(3);

    // at full size (one scan pixel per screen pixel), all of the frame corrected: no reduction on
    // either side, only the two decodes, the preview's JPEG and the render's
    await page.click('[data-toggle-layout]');
    await page.waitForSelector('[data-compare-view][data-layout="split"]');
    await page.locator('[data-split-slider]').fill('0');
    await page.getByRole('button', { name: 'Full size (1)' }).click();
    const full = await settledCorrected(page, 'the full-size view to settle', (shot) => Math.abs(shot.imageBox.w - 970) < 0.01);
    await snap(page, 'controls-02b-full-size');
    const atFullSize = await sameSquares(full, 4, 'full size');
    expect(atFullSize.d.length).toBeGreaterThan(1000);
    expect(atFullSize.mean).toBeLessThan(1);
  }, 300_000);

  it('uses the saved correction on the chosen prints of the batch, and not on the others', async () => {
    const [, second, third, fourth] = items;
    const before = await Promise.all([second, third, fourth].map((x) => detail(x.id)));
    await page.click('[data-copy-to-prints] summary');
    await page.check(`[data-copy-target="${second.seq}"]`);
    await page.check(`[data-copy-target="${fourth.seq}"]`);
    expect(await page.locator('[data-copy-apply]').innerText()).toBe('Use on 2 prints');
    await page.click('[data-copy-apply]');
    await page.waitForSelector('[data-notice="info"]:has-text("now used on")');
    expect(await page.locator('[data-notice]').innerText()).toContain(`prints ${second.seq} and ${fourth.seq}`);
    await snap(page, 'controls-03-used-on-others');

    const source = (await detail(items[0].id)).current;
    const { geometry: _g, ...colour } = source;
    const [s2, s3, s4] = await Promise.all([second, third, fourth].map((x) => detail(x.id)));
    expect(s2.currentVersion).toBe(before[0].currentVersion + 1);
    expect(s2.current).toEqual(colour);
    expect(s4.current).toEqual(colour);
    expect(s3.currentVersion).toBe(before[1].currentVersion);
    expect(s3.current).toEqual(before[1].current);
  });

  it('shows a viewer the versions and no editing controls, and editing keys change nothing', async () => {
    const viewerContext = await launchBrowser();
    try {
      const vp = await viewerContext.newPage();
      await signInPage(vp, archive.viewer.email, TEST_PASSWORD);
      await vp.goto(`${BASE}/items/${items[2].id}`);
      await vp.waitForSelector('[data-compare-view][data-loaded="yes"]');
      await vp.waitForSelector('[data-versions-panel]');
      expect(await vp.locator('[data-adjust-panel]').count()).toBe(0);
      for (const control of ['#adj-strength', '#adj-black', '#adj-contrast', '[data-pick-white]', '[data-save-correction]', '[data-turn]', '[data-trim]', '[data-copy-to-prints]', '[data-curve-controls]']) {
        expect(await vp.locator(control).count(), control).toBe(0);
      }
      expect(await vp.getByRole('button', { name: /Use again|Back to the proposal/ }).count()).toBe(0);
      const before = await detail(items[2].id);
      await vp.keyboard.press('w');
      await vp.keyboard.press(']');
      await vp.keyboard.press('s');
      expect(await vp.locator('[data-compare-view]').getAttribute('style')).not.toContain('crosshair');
      expect(await vp.locator('[data-notice]').count()).toBe(0);
      expect((await detail(items[2].id)).currentVersion).toBe(before.currentVersion);
      await snap(vp, 'controls-04-viewer');
    } finally {
      await viewerContext.close();
    }
  });
});
