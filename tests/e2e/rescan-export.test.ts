/**
 * Rescans and export in Chromium, on scans uploaded through the real API and processed by the
 * real worker: set a print aside in the print view, find it on the rescan list, attach the scan
 * of its negative and see it become the print's current image; caption two prints with the
 * keyboard flow, export them, download the zip and check its bag. Screenshots go to tests/artifacts/.
 */
import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../db/index.ts';
import { checkBag } from '../../src/lib/archive/bagit.ts';
import { zipBagSource } from '../../src/lib/server/bag-files.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { batchWithPrints, scan, sha256 } from '../integration/export/helpers.ts';

let archive: TestArchive;
let browser: BrowserContext;
let page: Page;
let batchId: string;
let items: string[];
let tmp: string;
const negative = scan(777);

beforeAll(async () => {
  archive = await makeArchive('rescan-export-e2e');
  ({ batchId, itemIds: items } = await batchWithPrints(asToken(archive.editor), 'Hall drawer', 3, 71));
  tmp = await fs.mkdtemp(path.join(os.tmpdir(), 'dl-e2e-'));
  browser = await launchBrowser();
  page = await browser.newPage();
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
}, 300_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
  if (tmp) await fs.rm(tmp, { recursive: true, force: true });
});

/** SHA-256 of what a URL serves, fetched inside the page with the signed-in session. */
function servedSha(p: Page, url: string): Promise<string> {
  return p.evaluate(async (u) => {
    const b = await (await fetch(u)).arrayBuffer();
    return [...new Uint8Array(await crypto.subtle.digest('SHA-256', b))].map((x) => x.toString(16).padStart(2, '0')).join('');
  }, url);
}

describe('the rescan list in the browser', () => {
  it('sets a print aside in the print view, with where its negative is kept', async () => {
    await page.goto(`${BASE}/items/${items[0]}`);
    await page.waitForSelector('[data-compare-view][data-loaded="yes"]');
    await page.keyboard.press('r');
    await page.waitForSelector('[data-rescan-form]');
    await page.getByLabel('Yes, we have it').check();
    await page.getByLabel('Where it is kept').fill('Biscuit tin, spare room');
    await page.getByLabel('Note').fill('strip 3, frame 5');
    await page.click('[data-confirm-rescan]');
    await page.waitForURL(`**/items/${items[1]}`);
  });

  it('shows it on the rescan list with the place of its negative and the note', async () => {
    await page.goto(`${BASE}/rescans`);
    const row = page.locator(`[data-rescan-item="${items[0]}"]`);
    await row.waitFor();
    expect(await row.locator('[data-location]').innerText()).toBe('Biscuit tin, spare room');
    expect(await row.innerText()).toContain('strip 3, frame 5');
    await page.emulateMedia({ media: 'print' });
    expect(await page.locator('[data-csv-link]').isVisible()).toBe(false);
    expect(await row.isVisible()).toBe(true);
    // the printed list has the print's thumbnail, loaded, to match print and negative at the cupboard
    const thumb = row.locator('img[data-rescan-thumbnail]');
    expect(await thumb.isVisible()).toBe(true);
    await page.waitForFunction((id) => ((document.querySelector(`[data-rescan-item="${id}"] img`) as HTMLImageElement | null)?.naturalWidth ?? 0) > 0, items[0]);
    expect(await row.innerText()).toContain('Box: Shoebox 1');
    await snap(page, 'rescan-01-list-print-view');
    await page.emulateMedia({ media: 'screen' });
  });

  it('attaches the scan of the negative and shows it replacing the current image', async () => {
    const before = await servedSha(page, `/api/items/${items[0]}/thumbnail`);
    await page.setInputFiles(`input[data-rescan-for="${items[0]}"]`, { name: 'negative-strip3-frame5.jpg', mimeType: 'image/jpeg', buffer: await negative });
    await page.waitForSelector(`[data-attached-item="${items[0]}"]`, { timeout: 30_000 });
    for (let i = 0; i < 60; i++) {
      if ((await page.locator(`[data-attached-item="${items[0]}"]`).getAttribute('data-state')) === 'ready') break;
      await page.waitForTimeout(1000);
      await page.reload();
    }
    expect(await page.locator(`[data-attached-item="${items[0]}"]`).getAttribute('data-state')).toBe('ready');
    expect(await page.locator(`[data-rescan-item="${items[0]}"]`).count()).toBe(0);
    expect(await servedSha(page, `/api/items/${items[0]}/original`)).toBe(sha256(await negative));
    expect(await servedSha(page, `/api/items/${items[0]}/thumbnail`)).not.toBe(before);
    await snap(page, 'rescan-02-attached');
  });
});

describe('captions and export in the browser', () => {
  it('captions two prints one after the other, the date shown in words as it is typed', async () => {
    await page.goto(`${BASE}/batches/${batchId}/captions`);
    await page.waitForSelector('[data-caption-form]');
    await page.locator('[data-caption-row="2"] button').click();
    await page.getByLabel('Caption').fill('Máire and Zoë on the pier');
    const date = page.locator('#f-date');
    await date.fill('1981~');
    expect(await page.locator('[data-date-words]').first().innerText()).toMatch(/^about 1981 /);
    await date.fill('the summer Gran came');
    await page.waitForSelector('[data-date-error]');
    await date.fill('summer 81');
    expect(await page.locator('[data-date-words]').first().innerText()).toMatch(/^summer 1981 /);
    expect(await page.locator('[data-date-edtf]').first().innerText()).toBe('1981-22');
    await page.getByLabel('Place').first().fill('Mullaghmore');
    await page.locator('[data-next]').click();
    await page.waitForSelector('h2:has-text("Print 3 of 3")');
    await page.getByLabel('Caption').fill('The new car, Großvater at the wheel');
    await page.keyboard.press('Control+Enter');
    await page.waitForSelector('[role="status"]:has-text("Saved print 3")');
    await snap(page, 'captions-01-two-captioned');
    const meta = await page.evaluate(async (ids) => Promise.all(ids.map(async (id) => (await fetch(`/api/items/${id}/metadata`)).json())), [items[1], items[2]]);
    expect(meta.map((m: any) => [m.caption, m.dateWords, m.place])).toEqual([
      ['Máire and Zoë on the pier', 'summer 1981', 'Mullaghmore'],
      ['The new car, Großvater at the wheel', '', null],
    ]);
  });

  it('exports the two prints, follows the progress and downloads a zip whose bag checks out', async () => {
    await page.goto(`${BASE}/export`);
    await page.getByLabel(/Prints I choose/).check();
    await page.locator(`[data-export-print="${items[1]}"] input`).check();
    await page.locator(`[data-export-print="${items[2]}"] input`).check();
    await page.click('[data-start-export]');
    const entry = page.locator('[data-export]').first();
    await page.waitForSelector('[data-export][data-state="ready"]', { timeout: 120_000 });
    expect(await entry.innerText()).toContain('2 prints');
    await snap(page, 'export-01-ready');
    const [download] = await Promise.all([page.waitForEvent('download'), entry.locator('[data-download]').click()]);
    const file = path.join(tmp, download.suggestedFilename());
    await download.saveAs(file);
    const bag = await zipBagSource(file);
    try {
      const report = await checkBag(bag);
      expect(report.ok).toBe(true);
      const photos = (await bag.list()).map((f) => f.path).filter((p) => p.startsWith('data/photos/')).sort();
      // files carry the prints' own numbers (prints 2 and 3 of the batch), as every page shows them
      expect(photos).toEqual(['data/photos/1981/1981 Máire and Zoë on the pier 0002.jpg', 'data/photos/undated/undated The new car, Großvater at the wheel 0003.jpg']);
    } finally {
      bag.close();
    }
  });
});
