/**
 * Finding things in a batch, in Chromium, on scans uploaded through the real API and processed by
 * the real worker: the batch page a page at a time, the search and the "still to find out"
 * filters (kept in the page's address), the counts after a bulk decision without a reload, the
 * review and caption progress on the batch list, the split line moved from the keyboard, the upload
 * page's list reached by Tab, and the captions list's badge saying what it counts. Captions,
 * people and places are invented for the test. Screenshots are kept in tests/artifacts/.
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
  archive = await makeArchive('finding-e2e');
  const editor = asToken(archive.editor);
  ({ batchId, items } = await readyBatch(editor, 'Landing cupboard', await fadedScans(5, 801)));
  const meta: Record<number, Record<string, unknown>> = {
    1: { caption: 'Picnic at Lough Arrow', people: ['Máire'], dateEdtf: '1981' },
    2: { caption: 'The new car', people: ['Tom Byrne'] },
    3: { place: 'Lough Key' },
  };
  for (const [seq, body] of Object.entries(meta)) {
    const r = await editor.request('PATCH', `/api/items/${items[Number(seq) - 1].id}/metadata`, { json: body });
    if (r.status !== 200) throw new Error(`captioning print ${seq} answered ${r.status}: ${r.text}`);
  }
  const suggested = await asToken(archive.viewer).post(`/api/items/${items[3].id}/suggestions`, { caption: 'Granny on the pier' });
  if (suggested.status !== 201) throw new Error(`suggesting answered ${suggested.status}: ${suggested.text}`);
  browser = await launchBrowser();
  page = await browser.newPage();
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
}, 240_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

const shownSeqs = () => page.locator('[data-item-row]').evaluateAll((rows) => rows.map((r) => Number(r.getAttribute('data-seq'))));
/** Waits until the table shows exactly these prints (the island fetches them from the server). */
async function rowsBecome(seqs: number[]) {
  await page.waitForFunction((want) => {
    const got = [...document.querySelectorAll('[data-item-row]')].map((r) => Number(r.getAttribute('data-seq')));
    return JSON.stringify(got) === JSON.stringify(want) && !document.querySelector('[aria-busy="true"]');
  }, seqs, { timeout: 15_000 });
  expect(await shownSeqs()).toEqual(seqs);
}
const hydrated = (selector: string) =>
  page.waitForFunction((s) => {
    const el = document.querySelector(s);
    return Boolean(el && Object.keys(el).some((k) => k.startsWith('__reactFiber$')));
  }, selector, { timeout: 15_000 });

describe('finding prints on the batch page', () => {
  it('shows a page of prints at a time, finds them by words and by what they still lack, and keeps that in the address', async () => {
    await page.goto(`${BASE}/batches/${batchId}?per=2`);
    await hydrated('[data-batch-table]');
    expect(await shownSeqs()).toEqual([1, 2]);
    await expect(page.locator('[data-pager="top"] [data-range]').textContent()).resolves.toBe('Prints 1–2 of 5');
    await page.locator('[data-pager="top"] [data-page-next]').click();
    await rowsBecome([3, 4]);
    expect(new URL(page.url()).searchParams.get('page')).toBe('2');

    await page.getByLabel('Search captions, people, places, the back of the print').fill('lough');
    await rowsBecome([1, 3]);
    await expect(page.locator('[data-pager="top"] [data-range]').textContent()).resolves.toBe('Prints 1–2 of 2 that match');
    expect(new URL(page.url()).searchParams.get('q')).toBe('lough');
    expect(new URL(page.url()).searchParams.get('page')).toBeNull();
    await expect(page.locator('[data-item-row][data-seq="1"] [data-caption]').textContent()).resolves.toBe('Picnic at Lough Arrow');

    await page.getByLabel('People unknown').check();
    await rowsBecome([3]);
    await snap(page, 'finding-01-search-and-filter');

    // the address alone gives the same page: the server renders it from there
    await page.reload();
    await hydrated('[data-batch-table]');
    expect(await shownSeqs()).toEqual([3]);
    await expect(page.getByLabel('Search captions, people, places, the back of the print').inputValue()).resolves.toBe('lough');
    await expect(page.getByLabel('People unknown').isChecked()).resolves.toBe(true);

    await page.getByLabel('Search captions, people, places, the back of the print').fill('');
    await rowsBecome([3, 4]);
    await page.getByLabel('People unknown').uncheck();
    await page.getByLabel('No date yet').check();
    await rowsBecome([2, 3]);
    await expect(page.locator('[data-pager="top"] [data-range]').textContent()).resolves.toBe('Prints 1–2 of 4 that match');
    await page.getByLabel('No caption yet').check();
    await rowsBecome([3, 4]);
    await expect(page.locator('[data-pager="top"] [data-range]').textContent()).resolves.toBe('Prints 1–2 of 3 that match');
  });

  it('updates the counts after a bulk decision without a reload, and selects every match across pages', async () => {
    await page.goto(`${BASE}/batches/${batchId}`);
    await hydrated('[data-batch-table]');
    await hydrated('[data-batch-tally]');
    const tally = page.locator('[data-batch-tally]');
    await expect(tally.textContent()).resolves.toContain('5 prints · 0 decided · 2 captioned');
    // a mark on this document: a reload would lose it
    await page.evaluate(() => ((window as unknown as { __samePage: boolean }).__samePage = true));

    await page.getByLabel('Select print 1').check();
    await page.getByLabel('Select print 2').check();
    await page.locator('[data-bulk="accepted"]').click();
    await page.locator('[data-bulk-message]', { hasText: 'Accepted: 2 prints.' }).waitFor();
    await page.waitForSelector('[data-batch-tally][data-decided="2"]', { timeout: 10_000 });
    await expect(tally.textContent()).resolves.toContain('5 prints · 2 decided');
    await expect(page.evaluate(() => (window as unknown as { __samePage?: boolean }).__samePage)).resolves.toBe(true);

    // every print that matches, over pages not shown
    await page.goto(`${BASE}/batches/${batchId}?per=2&decision=undecided`);
    await hydrated('[data-batch-table]');
    expect(await shownSeqs()).toEqual([3, 4]);
    await page.locator('[data-select-matching]').click();
    await page.waitForSelector('[data-selected-count="3"]');
    await page.locator('[data-bulk="skipped"]').click();
    await page.locator('[data-bulk-message]', { hasText: 'Left for later: 3 prints.' }).waitFor();
    await page.waitForSelector('[data-batch-tally][data-decided="5"]', { timeout: 10_000 });
    await page.waitForSelector('[data-no-match]');
    await snap(page, 'finding-02-after-bulk');
  });

  it('shows each batch with its review and caption progress on the batch list', async () => {
    await page.goto(`${BASE}/batches`);
    const entry = page.locator('[data-batch="Landing cupboard"]');
    await expect(entry.locator('[data-progress="decided"]').getAttribute('data-n')).resolves.toBe('5');
    await expect(entry.locator('[data-progress="decided"]').getAttribute('data-of')).resolves.toBe('5');
    await expect(entry.locator('[data-progress="decided"]').textContent()).resolves.toContain('5 of 5 decided');
    await expect(entry.locator('[data-progress="captioned"]').textContent()).resolves.toContain('2 of 5 with a caption');
    await expect(entry.getByRole('progressbar', { name: 'Captioned: 2 of 5' }).getAttribute('aria-valuenow')).resolves.toBe('2');
    await snap(page, 'finding-03-batch-list');
  });

  it('draws the batch chart with the grade lines and their words over the marks', async () => {
    await page.goto(`${BASE}/batches/${batchId}`);
    const order = await page.locator('[data-batch-chart] svg[data-scatter]').evaluate((svg) => {
      const all = [...svg.querySelectorAll('*')];
      const lastMark = Math.max(...[...svg.querySelectorAll('[data-dot], [data-cell]')].map((e) => all.indexOf(e)));
      const firstLine = Math.min(...[...svg.querySelectorAll('[data-grade-line]')].map((e) => all.indexOf(e)));
      return { kind: svg.getAttribute('data-scatter'), marks: svg.querySelectorAll('[data-dot], [data-cell]').length, lastMark, firstLine };
    });
    expect(order.kind).toBe('dots');
    expect(order.marks).toBe(5);
    expect(order.firstLine).toBeGreaterThan(order.lastMark);
  });
});

describe('reaching things from the keyboard', () => {
  it('moves the split line of the compare view with the arrow keys, without leaving the print', async () => {
    await page.goto(`${BASE}/items/${items[0].id}`);
    await page.waitForSelector('[data-compare-view][data-loaded="yes"]', { timeout: 30_000 });
    const slider = page.getByRole('slider', { name: 'Split line position' });
    await slider.focus();
    const before = Number(await slider.inputValue());
    for (let i = 0; i < 10; i++) await page.keyboard.press('ArrowLeft');
    await expect(slider.inputValue()).resolves.toBe(String(before - 10));
    await expect(slider.getAttribute('aria-valuetext')).resolves.toBe(`Original on the left ${before - 10} %, corrected on the right ${110 - before} %`);
    // the line drawn in the frame followed: the teal line sits 10 % of the frame further left
    const width = (await page.locator('[data-compare-view]').boundingBox())!.width;
    const drawn = await page.evaluate(() => {
      const canvases = document.querySelectorAll<HTMLCanvasElement>('[data-compare-view] canvas');
      const guides = canvases[canvases.length - 1];
      const ratio = guides.width / guides.getBoundingClientRect().width;
      const row = guides.getContext('2d')!.getImageData(0, Math.round(60 * ratio), guides.width, 1).data;
      const xs: number[] = [];
      for (let x = 0; x < guides.width; x++) {
        const i = x * 4;
        if (row[i + 3] > 200 && Math.abs(row[i] - 13) < 30 && Math.abs(row[i + 1] - 95) < 30 && Math.abs(row[i + 2] - 89) < 30) xs.push(x / ratio);
      }
      return xs;
    });
    expect(drawn.length).toBeGreaterThan(0);
    expect(Math.abs(drawn[0] - (width * (before - 10)) / 100)).toBeLessThan(4);
    expect(new URL(page.url()).pathname).toBe(`/items/${items[0].id}`);
  });

  it('reaches the list of prints already in the batch on the upload page with Tab', async () => {
    await page.goto(`${BASE}/batches/${batchId}/upload`);
    await hydrated('[data-earlier-list]');
    let reached = false;
    for (let i = 0; i < 40 && !reached; i++) {
      await page.keyboard.press('Tab');
      reached = await page.evaluate(() => document.activeElement?.hasAttribute('data-earlier-list') ?? false);
    }
    expect(reached).toBe(true);
    await expect(page.locator('[data-earlier-list]').getAttribute('aria-labelledby')).resolves.toBe('earlier-heading');
  });

  it('says what the pending badge in the captions list counts', async () => {
    await page.goto(`${BASE}/batches/${batchId}/captions`);
    await expect(page.locator('[data-caption-row="4"] [data-pending-badge]').textContent()).resolves.toBe('1 suggestion to look at');
  });
});
