/**
 * The same picture twice in Chromium, on scans uploaded through the real API and analysed by the
 * real worker: a print's page says which earlier print it looks like and shows both side by side;
 * linking them is shown on both prints' pages after a reload, and keeping the other one removes
 * this print and opens the one kept. The scans: lab photographs as a faded print and as a clean
 * rescan (tests/support/same-picture-scans.ts). Screenshots go to tests/artifacts/.
 */
import type { BrowserContext, Page } from 'playwright-core';
import { QueryTypes } from 'sequelize';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb, db } from '../../db/index.ts';
import { loadPhoto, PHOTOS } from '../lab/photos.ts';
import { rng } from '../lab/simulator.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { batchOfScans, cleanRescan, fadedScan } from '../support/same-picture-scans.ts';

let archive: TestArchive;
let browser: BrowserContext;
let page: Page;
let prints: string[];
let again: string[];

const photo = (id: string) => loadPhoto(PHOTOS.find((p) => p.id === id)!, 512);

beforeAll(async () => {
  archive = await makeArchive('same-picture-e2e');
  const editor = asToken(archive.editor);
  ({ ids: prints } = await batchOfScans(editor, 'Shoebox 1978–83', [
    { name: 'chelsea-print.jpg', bytes: await fadedScan(await photo('chelsea'), 5, 'dark') },
    { name: 'friends-print.jpg', bytes: await fadedScan(await photo('friends'), 6, 'light') },
  ]));
  ({ ids: again } = await batchOfScans(editor, 'Later envelope', [
    { name: 'chelsea-negative.jpg', bytes: await cleanRescan(await photo('chelsea'), rng(15)) },
    { name: 'friends-negative.jpg', bytes: await cleanRescan(await photo('friends'), rng(16)) },
  ]));
  browser = await launchBrowser();
  page = await browser.newPage();
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
}, 300_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

const shown = (p: Page, selector: string) => p.$eval(selector, (img) => (img as HTMLImageElement).complete && (img as HTMLImageElement).naturalWidth > 0);

describe('the same picture on a print’s page', () => {
  it('names the earlier print it looks like, shows both side by side, and links them for good', async () => {
    await page.goto(`${BASE}/items/${again[0]}`);
    const pair = await page.waitForSelector(`[data-same-picture-pair="${prints[0]}"]`);
    expect(await pair.innerText()).toContain('This looks like Print 1 of “Shoebox 1978–83”.');
    await page.waitForFunction(() => [...document.querySelectorAll<HTMLImageElement>('[data-same-picture] img')].every((i) => i.complete && i.naturalWidth > 0));
    expect(await shown(page, '[data-same-picture-this]')).toBe(true);
    expect(await shown(page, '[data-same-picture-other]')).toBe(true);
    await snap(page, 'same-picture-proposed');

    await page.click(`[data-same-picture-pair="${prints[0]}"] [data-choice="link"]`);
    await page.waitForSelector(`[data-linked-print="${prints[0]}"]`);
    expect(await page.$(`[data-same-picture-pair="${prints[0]}"]`)).toBeNull();
    await page.reload();
    await page.waitForSelector(`[data-linked-print="${prints[0]}"]`);
    await page.goto(`${BASE}/items/${prints[0]}`);
    const back = await page.waitForSelector(`[data-linked-print="${again[0]}"]`);
    expect(await back.innerText()).toBe('Print 1 of “Later envelope”');
    await snap(page, 'same-picture-linked');
  });

  it('keeps the other print: this one is removed and the kept one opens', async () => {
    await page.goto(`${BASE}/items/${again[1]}`);
    await page.waitForSelector(`[data-same-picture-pair="${prints[1]}"]`);
    await page.click(`[data-same-picture-pair="${prints[1]}"] [data-choice="keep_other"]`);
    await page.waitForURL(`**/items/${prints[1]}`);
    const [row] = await db().query<{ removed: boolean; kept: boolean }>(
      `SELECT (SELECT deleted_at IS NOT NULL FROM items WHERE id = :gone) AS removed, (SELECT deleted_at IS NULL FROM items WHERE id = :kept) AS kept`,
      { replacements: { gone: again[1], kept: prints[1] }, type: QueryTypes.SELECT },
    );
    expect(row).toEqual({ removed: true, kept: true });
    // nothing is proposed any more on the kept print's page
    await page.waitForSelector(`[data-same-picture-none="${prints[1]}"]`, { state: 'attached' });
    expect(await page.$('[data-same-picture-pair]')).toBeNull();
  });
});
