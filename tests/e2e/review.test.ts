/**
 * The review workbench in Chromium, on scans uploaded through the real upload API and processed
 * by the real worker: drag the split, pick a white point, accept one print, set one aside for a
 * rescan with the negative's place, and find the decisions in the batch table. Screenshots are
 * kept in tests/artifacts/.
 */
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../db/index.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { fadedScans, readyBatch } from '../integration/review/helpers.ts';

let archive: TestArchive;
let browser: BrowserContext;
let page: Page;
let batchId: string;
let items: { id: string; seq: number }[];

beforeAll(async () => {
  archive = await makeArchive('review-e2e');
  ({ batchId, items } = await readyBatch(asToken(archive.editor), 'Attic shoebox', await fadedScans(3, 51)));
  browser = await launchBrowser();
  page = await browser.newPage();
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
});
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

/** x positions (CSS px) where the guide layer has drawn the teal split line, on a row near the top. */
async function drawnSplitX(p: Page): Promise<number[]> {
  return p.evaluate(() => {
    const canvases = document.querySelectorAll<HTMLCanvasElement>('[data-compare-view] canvas');
    const guides = canvases[canvases.length - 1];
    const ratio = guides.width / guides.getBoundingClientRect().width;
    const y = Math.round(60 * ratio);
    const row = guides.getContext('2d')!.getImageData(0, y, guides.width, 1).data;
    const xs: number[] = [];
    // the split line is drawn in the teal of the palette (lamp-600, #0d5f59)
    for (let x = 0; x < guides.width; x++) {
      const i = x * 4;
      if (row[i + 3] > 200 && Math.abs(row[i] - 13) < 30 && Math.abs(row[i + 1] - 95) < 30 && Math.abs(row[i + 2] - 89) < 30) xs.push(x / ratio);
    }
    return xs;
  });
}

/** Mean colour of the drawn print in a band right of the split (the corrected side). */
async function correctedMean(p: Page): Promise<number[]> {
  return p.evaluate(() => {
    const c = document.querySelector<HTMLCanvasElement>('[data-compare-view] canvas')!;
    const w = c.width;
    const h = c.height;
    const d = c.getContext('2d')!.getImageData(Math.round(w * 0.6), Math.round(h * 0.3), Math.round(w * 0.25), Math.round(h * 0.4)).data;
    const sum = [0, 0, 0];
    for (let i = 0; i < d.length; i += 4) for (let k = 0; k < 3; k++) sum[k] += d[i + k];
    return sum.map((s) => s / (d.length / 4));
  });
}

describe('reviewing a batch in the browser', () => {
  it('shows the batch with its prints, grades, paper swatches and dye bars', async () => {
    await page.goto(`${BASE}/batches/${batchId}`);
    await page.waitForSelector('[data-batch-table] [data-item-row]');
    expect(await page.locator('[data-item-row]').count()).toBe(3);
    expect(await page.locator('[data-batch-chart] circle').count()).toBe(3);
    expect(await page.locator('[data-decision-cell]').allInnerTexts()).toEqual(['Not reviewed yet', 'Not reviewed yet', 'Not reviewed yet']);
    await snap(page, 'review-01-batch');
  });

  it("shows on a print's page how far its dyes faded and, apart from that, how far its paper yellowed", async () => {
    const api = asToken(archive.editor);
    let yellowed = 0;
    for (const it of items) {
      const res = await api.get(`/api/items/${it.id}`);
      // the batch's pooled estimate, where it replaced the print's own, is what the page shows
      const item = res.body.item as { fadeGrade: string; analysis: { yellowingGrade: string; pooledResult?: { yellowingGrade: string } } };
      const analysis = { fadeGrade: item.fadeGrade, yellowingGrade: item.analysis.pooledResult?.yellowingGrade ?? item.analysis.yellowingGrade };
      await page.goto(`${BASE}/items/${it.id}`);
      await page.waitForSelector('[data-review-workbench]');
      expect(await page.locator('[data-grade]').getAttribute('data-grade')).toBe(analysis.fadeGrade);
      const badge = page.locator('[data-yellowing-grade]');
      if (analysis.yellowingGrade === 'none') {
        expect(await badge.count()).toBe(0);
      } else {
        yellowed++;
        expect(await badge.getAttribute('data-yellowing-grade')).toBe(analysis.yellowingGrade);
        expect(await badge.innerText()).toMatch(/^Paper yellowing: (Slight|Moderate|Severe)$/);
      }
    }
    // two of the three scans aged in dark storage, which yellows the paper base
    expect(yellowed).toBeGreaterThan(0);
    await page.goto(`${BASE}/batches/${batchId}`);
    await page.waitForSelector('[data-batch-table] [data-item-row]');
  });

  it('drags the split, and the drawn split line follows', async () => {
    await page.click('[data-start-review]');
    await page.waitForURL(`**/items/${items[0].id}`);
    await page.waitForSelector('[data-compare-view][data-loaded="yes"]');
    const box = (await page.locator('[data-compare-view]').boundingBox())!;
    const before = await drawnSplitX(page);
    expect(before.length).toBeGreaterThan(0);
    expect(Math.abs(before[0] - box.width / 2)).toBeLessThan(4);
    await snap(page, 'review-02-print');

    await page.mouse.move(box.x + before[0] + 1, box.y + 120);
    await page.mouse.down();
    for (let i = 1; i <= 10; i++) await page.mouse.move(box.x + before[0] + 1 - (i * box.width * 0.25) / 10, box.y + 120);
    await page.mouse.up();
    const after = await drawnSplitX(page);
    expect(after.length).toBeGreaterThan(0);
    expect(Math.abs(after[0] - box.width * 0.25)).toBeLessThan(4);
    await snap(page, 'review-03-split-moved');
  });

  it('shows the whole original while Space is held', async () => {
    await page.keyboard.down(' ');
    await page.waitForSelector('[data-compare-view][data-holding-original="yes"]');
    expect(await drawnSplitX(page)).toEqual([]);
    await page.keyboard.up(' ');
    await page.waitForSelector('[data-compare-view][data-holding-original="no"]');
  });

  it('picks a white point on the print and the preview changes', async () => {
    const before = await correctedMean(page);
    const swatchBefore = await page.locator('[data-white-swatch]').evaluate((e) => getComputedStyle(e).backgroundColor);
    await page.keyboard.press('w');
    await page.waitForSelector('[data-pick-white][aria-pressed="true"]');
    const box = (await page.locator('[data-compare-view]').boundingBox())!;
    // a spot inside the picture, away from the paper border: a deliberately wrong white point
    await page.mouse.click(box.x + box.width * 0.45, box.y + box.height * 0.55);
    await page.waitForSelector('[data-pick-white][aria-pressed="false"]');
    const swatchAfter = await page.locator('[data-white-swatch]').evaluate((e) => getComputedStyle(e).backgroundColor);
    expect(swatchAfter).not.toBe(swatchBefore);
    const after = await correctedMean(page);
    const change = Math.max(...after.map((v, i) => Math.abs(v - before[i])));
    expect(change).toBeGreaterThan(5);
    expect(await page.locator('[data-dirty]').getAttribute('data-dirty')).toBe('yes');
    await snap(page, 'review-04-white-point');
    // back to the proposal before accepting: U
    await page.keyboard.press('u');
    await page.waitForSelector('[data-dirty="no"]');
  });

  it('switches to side by side with V and back', async () => {
    await page.keyboard.press('v');
    await page.waitForSelector('[data-compare-view][data-layout="side"]');
    // the canvas is redrawn on an animation frame after the layout changes: wait for the redraw
    // that has no split line (the split layout before it had one)
    await expect.poll(() => drawnSplitX(page), { timeout: 30_000, interval: 50 }).toEqual([]);
    await snap(page, 'review-04b-side-by-side');
    await page.keyboard.press('v');
    await page.waitForSelector('[data-compare-view][data-layout="split"]');
  });

  it('lists the keys in the help overlay', async () => {
    await page.keyboard.press('?');
    await page.waitForSelector('[data-help-overlay]');
    expect(await page.locator('[data-help-overlay] tr').count()).toBeGreaterThan(10);
    await snap(page, 'review-05-keys');
    await page.keyboard.press('Escape');
    await page.waitForSelector('[data-help-overlay]', { state: 'detached' });
  });

  it('accepts the first print with A and moves on to the next', async () => {
    await page.keyboard.press('a');
    await page.waitForURL(`**/items/${items[1].id}`);
    await page.waitForSelector('[data-notice="info"]');
    expect(await page.locator('[data-notice]').innerText()).toContain('Accepted: print 1');
    await page.waitForSelector('[data-compare-view][data-loaded="yes"]');
  });

  it('sets the second print aside for a rescan, with where its negative is kept', async () => {
    await page.keyboard.press('r');
    await page.waitForSelector('[data-rescan-form]');
    await page.getByLabel('Yes, we have it').check();
    await page.getByLabel('Where it is kept').fill('sleeve 12, blue box');
    await page.getByLabel('Note').fill('the one by the lake');
    await snap(page, 'review-06-rescan-form');
    await page.click('[data-confirm-rescan]');
    await page.waitForURL(`**/items/${items[2].id}`);
    expect(await page.locator('[data-notice]').innerText()).toContain('Set aside for a rescan: print 2');
  });

  it('shows both decisions in the batch table', async () => {
    await page.goto(`${BASE}/batches/${batchId}`);
    await page.waitForSelector('[data-batch-table] [data-item-row]');
    const row = (seq: number) => page.locator(`[data-item-row][data-seq="${seq}"]`);
    expect(await row(1).getAttribute('data-decision')).toBe('accepted');
    expect(await row(2).getAttribute('data-decision')).toBe('rescan');
    expect(await row(2).locator('[data-decision-cell]').innerText()).toContain('negative: sleeve 12, blue box');
    expect(await row(3).getAttribute('data-decision')).toBe('none');
    await snap(page, 'review-07-batch-decided');
  });
});
