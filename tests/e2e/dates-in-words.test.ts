import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext } from 'playwright-core';
import { closeDb, Item } from '../../db/index.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { fadedScans, readyBatch } from '../integration/review/helpers.ts';

let a: TestArchive;
let browser: BrowserContext;
let batchId: string;
let items: { id: string; seq: number }[];
beforeAll(async () => {
  a = await makeArchive('dates-in-words');
  ({ batchId, items } = await readyBatch(asToken(a.editor), 'Biscuit tin', await fadedScans(2, 301)));
  browser = await launchBrowser();
}, 240_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

describe('dates as people say them, in the caption form', () => {
  it('stores "summer 1981" as EDTF 1981-22, shows the words back, and refuses what it cannot read without losing the stored date', async () => {
    const page = await browser.newPage();
    await signInPage(page, a.editor.email, TEST_PASSWORD);
    await page.goto(`${BASE}/batches/${batchId}/captions`, { waitUntil: 'networkidle' });
    const date = page.locator('#f-date');
    await date.fill('summer 1981');
    await expect(page.locator('[data-caption-form] [data-date-edtf]').textContent()).resolves.toBe('1981-22');
    await page.locator('[data-save]').click();
    await page.getByRole('status').filter({ hasText: 'Saved print' }).waitFor();
    const first = await Item.findByPk(items[0].id);
    expect(first!.dateEdtf).toBe('1981-22');

    // the words come back in the field after a reload, and the EDTF beside them
    await page.reload({ waitUntil: 'networkidle' });
    await expect(date.inputValue()).resolves.toBe('summer 1981');

    // EDTF typed directly is still understood
    await date.fill('198X');
    await expect(page.locator('[data-caption-form] [data-date-words]').textContent()).resolves.toMatch(/^the 1980s/);

    // a phrase it cannot read: the form says so and nothing is stored
    await date.fill('the week Gran came');
    await expect(page.locator('[data-caption-form] [data-date-error]').textContent()).resolves.toMatch(/not a date we can read/);
    await page.locator('[data-save]').click();
    await expect(date.getAttribute('aria-invalid')).resolves.toBe('true');
    await snap(page, 'dates-in-words-refused');
    expect((await Item.findByPk(items[0].id))!.dateEdtf).toBe('1981-22');
    await page.close();
  });

  it('takes words over the API too, and answers a phrase it cannot read with the one error shape', async () => {
    const client = asToken(a.editor);
    const ok = await client.request('PATCH', `/api/items/${items[1].id}/metadata`, { json: { dateEdtf: 'early 80s' } });
    expect(ok.status).toBe(200);
    expect(ok.body.dateEdtf).toBe('1980/1983~');
    expect(ok.body.dateWords).toBe('the early 1980s');
    const bad = await client.request('PATCH', `/api/items/${items[1].id}/metadata`, { json: { dateEdtf: 'summer 05', caption: 'Beach' } });
    expect(bad.status).toBe(400);
    expect(bad.body.error.fields.dateEdtf).toMatch(/1905 or 2005/);
    const after = await Item.findByPk(items[1].id);
    expect(after!.dateEdtf).toBe('1980/1983~');
    expect(after!.caption).toBeNull();
  });

  it('lists the phrases it understands, each with its EDTF, in the Guide', async () => {
    // the browser is still signed in as the editor
    const page = await browser.newPage();
    await page.goto(`${BASE}/guide#dates`, { waitUntil: 'load' });
    const row = page.locator('[data-date-phrases] tr', { hasText: 'early 80s' });
    await expect(row.locator('code').textContent()).resolves.toBe('1980/1983~');
    await page.close();
  });
});
