import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext, Page } from 'playwright-core';
import sharp from 'sharp';
import { closeDb, Item } from '../../db/index.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE, type Client } from '../support/http.ts';
import { fadedScans, readyBatch } from '../integration/review/helpers.ts';

let a: TestArchive;
let editor: Client;
let browser: BrowserContext;
let page: Page;
let batchId: string;
let items: { id: string; seq: number }[];
let failedId: string;

async function until<T>(what: string, check: () => Promise<T | undefined | null | false>, ms = 60_000): Promise<T> {
  const deadline = Date.now() + ms;
  for (;;) {
    const v = await check();
    if (v) return v;
    if (Date.now() > deadline) throw new Error(`waited in vain for ${what}`);
    await new Promise((r) => setTimeout(r, 250));
  }
}

beforeAll(async () => {
  a = await makeArchive('housekeeping');
  editor = asToken(a.editor);
  ({ batchId, items } = await readyBatch(editor, 'Hatbox', await fadedScans(3, 901)));
  // a scan cut short as a copy interrupted half-way leaves it: its header reads, its pixels do not
  const whole = await sharp({ create: { width: 800, height: 600, channels: 3, background: '#a08060' } }).jpeg({ quality: 95 }).toBuffer();
  const up = await editor.request('POST', `/api/batches/${batchId}/files`, {
    body: new Uint8Array(whole.subarray(0, Math.floor(whole.length / 2))),
    headers: { 'content-type': 'application/octet-stream', 'x-file-name': 'scan_0004.jpg' },
  });
  failedId = up.body.item.id;
  await until('the cut-short scan to fail', async () => (await Item.findByPk(failedId))?.state === 'failed');
  browser = await launchBrowser();
  page = await browser.newPage();
  await signInPage(page, a.editor.email, TEST_PASSWORD);
}, 240_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

const row = (id: string) => page.locator(`[data-item-row="${id}"]`);

describe('keeping a batch in order from its page', () => {
  it('undoes a bulk accept at once', async () => {
    await page.goto(`${BASE}/batches/${batchId}`, { waitUntil: 'networkidle' });
    await page.getByLabel(`Select print ${items[0].seq}`).check();
    await page.getByLabel(`Select print ${items[1].seq}`).check();
    await page.locator('[data-bulk="accepted"]').click();
    await page.locator('[data-bulk-message]', { hasText: 'Accepted: 2 prints.' }).waitFor();
    await expect(row(items[0].id).getAttribute('data-decision')).resolves.toBe('accepted');
    await page.locator('[data-undo-bulk]').click();
    await page.locator('[data-bulk-message]', { hasText: 'Undone: 2 prints' }).waitFor();
    await expect(row(items[0].id).locator('[data-decision-cell]').textContent()).resolves.toBe('Not reviewed yet');
    expect((await Item.findByPk(items[0].id))!.decision).toBeNull();
    expect((await Item.findByPk(items[1].id))!.decision).toBeNull();
  });

  it('removes a print after saying what goes, and restores it from Recently removed', async () => {
    await page.getByLabel(`Select print ${items[2].seq}`).check();
    await page.locator('[data-bulk="remove"]').click();
    await expect(page.locator('[data-remove-panel]').textContent()).resolves.toMatch(new RegExp(`Remove print ${items[2].seq} from this batch`));
    await page.locator('[data-confirm-remove]').click();
    await page.locator('[data-bulk-message]', { hasText: 'Removed 1 print.' }).waitFor();
    await expect(row(items[2].id).count()).resolves.toBe(0);
    expect(await Item.findByPk(items[2].id)).toBeNull();

    await page.goto(`${BASE}/removed`, { waitUntil: 'networkidle' });
    const entry = page.locator(`[data-removed-id="${items[2].id}"]`);
    await expect(entry.textContent()).resolves.toMatch(/Print \d+ of "Hatbox".*deleted for good on/);
    await entry.locator('[data-restore]').click();
    await page.locator('[data-restore-message]', { hasText: 'Restored print' }).waitFor();
    expect(await Item.findByPk(items[2].id)).not.toBeNull();
  });

  it('gives a failed print its reason in plain words, leaves it out of the captions, and offers Try again and Remove', async () => {
    await page.goto(`${BASE}/batches/${batchId}/captions`, { waitUntil: 'networkidle' });
    await expect(page.locator('[data-caption-row]').count()).resolves.toBe(3);

    await page.goto(`${BASE}/batches/${batchId}`, { waitUntil: 'networkidle' });
    await expect(row(failedId).locator('[data-failure-reason]').textContent()).resolves.toMatch(/cut short|damaged/);
    await row(failedId).getByRole('link').click();
    await page.waitForURL(`${BASE}/items/${failedId}`);
    await expect(page.getByRole('heading', { level: 1 }).textContent()).resolves.toMatch(/could not be read/);
    const reason = (await page.locator('[data-failed-print] [data-failure-reason]').textContent())!;
    expect(reason).toMatch(/cut short|damaged/);
    expect(reason).not.toMatch(/\.\.$/);

    await page.locator('[data-retry]').click();
    await page.locator('[data-failed-message]', { hasText: 'this time either' }).waitFor({ timeout: 60_000 });
    await snap(page, 'failed-print-tried-again');

    await page.locator('[data-remove-print]').click();
    await page.locator('[data-confirm-remove]').click();
    await page.waitForURL(`${BASE}/batches/${batchId}`);
    await expect(row(failedId).count()).resolves.toBe(0);
    expect(await Item.findByPk(failedId)).toBeNull();
  });
});

describe('the smaller things', () => {
  it('answers an address the app does not have with its own page, not the framework\'s', async () => {
    const r = await page.goto(`${BASE}/no-such-page`, { waitUntil: 'load' });
    expect(r!.status()).toBe(404);
    await expect(page.locator('[data-error-page="404"] h1').textContent()).resolves.toBe('There is nothing at this address');
    await expect(page.title()).resolves.toBe('Not found · Drawerlight');
  });

  it('copies a new API token with one button', async () => {
    await browser.grantPermissions(['clipboard-read', 'clipboard-write'], { origin: BASE });
    await page.goto(`${BASE}/settings`, { waitUntil: 'networkidle' });
    await page.locator('#token-name').fill('Scanning station');
    await page.getByRole('button', { name: 'Create token' }).click();
    const token = (await page.locator('[data-new-token]').textContent())!;
    await page.locator('[data-copy-token]').click();
    // the button says so once the clipboard has taken it (an asynchronous write)
    await page.locator('[data-copy-token]', { hasText: 'Copied' }).waitFor({ timeout: 10_000 });
    await expect(page.evaluate(() => navigator.clipboard.readText())).resolves.toBe(token);
  });
});
