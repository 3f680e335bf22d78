/**
 * The batch page's list of prints on a phone, in Chromium at 390 CSS pixels wide with touch: each
 * print reads as a card down the screen (thumbnail, number, caption, then state, fading, paper base,
 * dye left and decision, each under its word), with no box that scrolls sideways inside the page
 * and nothing past the screen's edge; choosing a print works by tapping. On a desktop window the
 * same list is still a table with its header. Captions are invented for the test; screenshots go to
 * tests/artifacts/.
 */
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../db/index.ts';
import { launchBrowser, PHONE, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { fadedScans, readyBatch } from '../integration/review/helpers.ts';

const LABELS = ['State', 'Fading', 'Paper base', 'Dye left', 'Decision'];
let archive: TestArchive;
let batchId: string;
let phone: BrowserContext;
let desktop: BrowserContext;

beforeAll(async () => {
  archive = await makeArchive('batch-phone');
  const editor = asToken(archive.editor);
  let items: { id: string }[];
  ({ batchId, items } = await readyBatch(editor, 'Hall cupboard shoebox with a long name', await fadedScans(3, 1901)));
  const r = await editor.request('PATCH', `/api/items/${items[0].id}/metadata`, { json: { caption: 'Grandad and the new bicycle outside the post office in the rain' } });
  if (r.status !== 200) throw new Error(`captioning answered ${r.status}: ${r.text}`);
  phone = await launchBrowser(PHONE);
  desktop = await launchBrowser();
}, 240_000);
afterAll(async () => {
  await phone?.close();
  await desktop?.close();
  await closeDb();
});

async function openBatch(context: BrowserContext): Promise<Page> {
  const page = await context.newPage();
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
  await page.goto(`${BASE}/batches/${batchId}`);
  await page.waitForFunction(() => {
    const el = document.querySelector('[data-batch-table]');
    return Boolean(el && Object.keys(el).some((k) => k.startsWith('__reactFiber$')));
  }, undefined, { timeout: 15_000 });
  await page.locator('[data-item-row]').nth(2).waitFor();
  return page;
}

describe('the batch list on a phone', () => {
  it('shows each print as a card down the screen, with no sideways scrolling box, and prints can be chosen by tapping', async () => {
    const page = await openBatch(phone);
    await snap(page, 'batch-phone-list');
    const width = PHONE.viewport.width;

    // nothing past the right edge of the screen
    const pageOverflow = await page.evaluate((w) => Math.max(document.documentElement.scrollWidth, document.body.scrollWidth) - w, width);
    expect(pageOverflow).toBeLessThanOrEqual(0);
    // and no box inside the list that scrolls sideways (or hides what does not fit)
    const scrollBoxes = await page.locator('[data-batch-table]').evaluate((section) =>
      [section, ...section.querySelectorAll<HTMLElement>('*')]
        .filter((el) => ['auto', 'scroll'].includes(getComputedStyle(el).overflowX) && el.scrollWidth > el.clientWidth + 1)
        .map((el) => `${el.tagName.toLowerCase()}.${String(el.className).split(' ').slice(0, 3).join('.')}: ${el.scrollWidth} in ${el.clientWidth}`),
    );
    expect(scrollBoxes).toEqual([]);

    for (let n = 0; n < 3; n++) {
      const row = page.locator('[data-item-row]').nth(n);
      const box = (await row.boundingBox())!;
      expect(box.x).toBeGreaterThanOrEqual(0);
      expect(box.x + box.width).toBeLessThanOrEqual(width);
      // every value is on the screen, under the word the table's header would give it
      const cells = await row.evaluate((tr) =>
        [...tr.querySelectorAll<HTMLElement>('td[data-label]')].map((td) => {
          const r = td.getBoundingClientRect();
          return { label: getComputedStyle(td, '::before').content.replace(/"/g, ''), left: r.left, right: r.right, height: r.height };
        }),
      );
      expect(cells.map((c) => c.label)).toEqual(LABELS);
      for (const c of cells) {
        expect(c.right, `${c.label} of print ${n + 1}`).toBeLessThanOrEqual(width);
        expect(c.left).toBeGreaterThanOrEqual(0);
        expect(c.height).toBeGreaterThan(0);
      }
      // the thumbnail and the number lead the card
      const thumb = (await row.locator('img').boundingBox())!;
      expect(thumb.x + thumb.width).toBeLessThanOrEqual(width);
      expect(thumb.y).toBeLessThan((await row.locator('td[data-label="State"]').boundingBox())!.y);
    }
    // a long caption stays within its card
    const caption = (await page.locator('[data-item-row][data-seq="1"] [data-caption]').boundingBox())!;
    expect(caption.x + caption.width).toBeLessThanOrEqual(width);

    await page.getByLabel('Select print 2').tap();
    await expect(page.locator('[data-selected-count]').textContent()).resolves.toBe('1 selected');
    await page.close();
  });

  it('keeps the table with its header on a desktop window', async () => {
    const page = await openBatch(desktop);
    await expect(page.locator('[data-batch-table] thead').isVisible()).resolves.toBe(true);
    const shown = await page.locator('[data-item-row]').first().evaluate((tr) => ({
      row: getComputedStyle(tr).display,
      labels: [...tr.querySelectorAll('td[data-label]')].map((td) => getComputedStyle(td, '::before').content),
    }));
    expect(shown.row).toBe('table-row');
    expect(shown.labels.every((c) => c === 'none' || c === 'normal')).toBe(true);
    await snap(page, 'batch-desktop-list');
    await page.close();
  });
});
