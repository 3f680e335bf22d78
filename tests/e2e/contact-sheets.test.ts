/**
 * Contact sheets in Chromium: an editor makes a sheet from the batch page, opens its page, and
 * types back what a relative wrote, print after print by keyboard alone; the answers are kept as
 * suggestions in the relative's name, and a date that cannot be read saves nothing.
 */
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Suggestion, closeDb } from '../../db/index.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { batchWithPrints } from '../integration/export/helpers.ts';

let archive: TestArchive;
let browser: BrowserContext;
let page: Page;
let batchId: string;
let items: string[];

beforeAll(async () => {
  archive = await makeArchive('sheets-e2e');
  ({ batchId, itemIds: items } = await batchWithPrints(asToken(archive.editor), 'Attic box', 3, 820));
  await asToken(archive.editor).patch(`/api/items/${items[1]}/metadata`, { caption: 'The new car' });
  browser = await launchBrowser();
  page = await browser.newPage();
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
}, 300_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

const focused = (p: Page) => p.evaluate(() => {
  const el = document.activeElement as HTMLElement | null;
  return { field: el?.dataset.field ?? null, print: el?.closest<HTMLElement>('[data-sheet-print]')?.dataset.sheetPrint ?? null };
});

describe('a contact sheet typed back in the browser', () => {
  it('is made from the batch page and shows the prints in the sheet\u2019s order with its PDF', async () => {
    await page.goto(`${BASE}/batches/${batchId}`);
    await page.click('[data-sheets-link]');
    await page.waitForSelector('[data-sheet-form]');
    await page.locator('[data-sheet-form] select').selectOption('letter');
    await page.getByRole('button', { name: 'Make the sheet' }).click();
    await page.waitForURL(/\/sheets\/[0-9a-f-]{36}$/);
    await page.waitForSelector('[data-relative]');
    expect(await page.locator('[data-sheet-print]').evaluateAll((els) => els.map((e) => (e as HTMLElement).dataset.sheetPrint))).toEqual(['1', '2', '3']);
    const pdf = await page.locator('[data-sheet-pdf]').getAttribute('href');
    const res = await page.request.get(`${BASE}${pdf}`);
    expect([res.status(), res.headers()['content-type'], (await res.body()).subarray(0, 5).toString('latin1')]).toEqual([200, 'application/pdf', '%PDF-']);
  });

  it('moves on with Enter, skips a print left empty, and keeps each answer as a suggestion in the relative\u2019s name', async () => {
    await page.locator('[data-relative]').fill('Aunt Nora');
    await page.locator('[data-sheet-print="1"] [data-field="who"]').focus();
    await page.keyboard.type('Zoë Hartigan, Tom Byrne');
    await page.keyboard.press('Tab');
    await page.keyboard.type('Strandhill');
    await page.keyboard.press('Tab');
    await page.keyboard.type('summer 81');
    await page.keyboard.press('Enter');
    await page.waitForSelector('[data-sheet-print="1"] [data-row-status]:has-text("Saved")');
    expect(await focused(page)).toEqual({ field: 'who', print: '2' });
    // nothing written beside print 2: Enter just moves on
    await page.keyboard.press('Enter');
    expect(await focused(page)).toEqual({ field: 'who', print: '3' });
    await page.keyboard.press('Tab');
    await page.keyboard.type('Rosses Point');
    await page.keyboard.press('Enter');
    await page.waitForSelector('[data-sheet-print="3"] [data-row-status]:has-text("Saved")');
    await snap(page, 'sheets-01-typed-back');
    const rows = await Suggestion.findAll({ where: { archiveId: archive.id }, order: [['createdAt', 'ASC']] });
    // "summer 81" is read as EDTF 1981-22 (Library of Congress EDTF, level 1 seasons)
    expect(rows.map((s) => [s.itemId, s.relativeName, s.people, s.place, s.dateEdtf])).toEqual([
      [items[0], 'Aunt Nora', ['Zoë Hartigan', 'Tom Byrne'], 'Strandhill', '1981-22'],
      [items[2], 'Aunt Nora', null, 'Rosses Point', null],
    ]);
  });

  it('shows why a date cannot be read and saves nothing for that print', async () => {
    const before = await Suggestion.count({ where: { archiveId: archive.id } });
    await page.locator('[data-sheet-print="2"] [data-field="when"]').fill('the summer Gran visited');
    await page.locator('[data-sheet-print="2"] [data-field="when"]').press('Enter');
    await page.waitForSelector('[data-sheet-print="2"] [data-row-status] .text-danger-700');
    expect(await page.locator('[data-sheet-print="2"] [data-row-status]').innerText()).toMatch(/not a date we can read/);
    expect(await focused(page)).toEqual({ field: 'when', print: '2' });
    expect(await Suggestion.count({ where: { archiveId: archive.id } })).toBe(before);
  });

  it('makes a sheet of the prints chosen on the batch page', async () => {
    await page.goto(`${BASE}/batches/${batchId}`);
    await page.getByLabel('Select print 3').check();
    await page.getByLabel('Select print 1').check();
    await page.click('[data-bulk="sheet"]');
    await page.waitForSelector('[data-sheet-form]');
    expect(await page.getByLabel('The prints I chose (2)').isChecked()).toBe(true);
    await page.getByRole('button', { name: 'Make the sheet' }).click();
    await page.waitForURL(/\/sheets\/[0-9a-f-]{36}$/);
    await page.waitForSelector('[data-relative]');
    expect(await page.locator('[data-sheet-print]').evaluateAll((els) => els.map((e) => (e as HTMLElement).dataset.sheetPrint))).toEqual(['1', '3']);
  });
});
