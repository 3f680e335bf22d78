import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext } from 'playwright-core';
import { closeDb, db } from '../../db/index.ts';
import { launchBrowser, signInPage } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { createBatch, generatedScans, upload, waitSettled } from '../support/scans.ts';

let browser: BrowserContext;
let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('batch-page-live');
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

describe('the batch page', () => {
  it('shows a print’s change of state and the new counts as they happen, without being reloaded', async () => {
    const editor = asToken(a.editor);
    const batchId = await createBatch(editor, 'Followed on its page');
    const [first, second] = await generatedScans(2, 7300);
    const added = await upload(editor, batchId, first.name, first.bytes);
    expect(added.status).toBe(201);
    const itemId = added.body.item.id as string;
    await waitSettled(editor, batchId);
    // the print goes back to waiting, as a retried print does; no job is sent, so only this test moves it on
    await db().query(`UPDATE items SET state = 'queued' WHERE id = :itemId`, { replacements: { itemId } });

    const page = await browser.newPage();
    await signInPage(page, a.viewer.email, TEST_PASSWORD);
    await page.goto(`${BASE}/batches/${batchId}`);
    const row = page.locator(`[data-item-row="${itemId}"]`);
    await row.and(page.locator('[data-state="queued"]')).waitFor({ timeout: 15_000 });
    // a mark that a reload would wipe
    await page.evaluate(() => ((window as unknown as { notReloaded: boolean }).notReloaded = true));
    // the page has its stream open before anything changes
    await page.locator('[data-batch-progress] [data-count="queued"] [data-value]').filter({ hasText: '1' }).waitFor({ timeout: 15_000 });
    await page.locator('[data-batch-progress]').getByText('(reconnecting …)').waitFor({ state: 'hidden', timeout: 15_000 });

    await db().query(`UPDATE items SET state = 'ready' WHERE id = :itemId`, { replacements: { itemId } });
    await row.and(page.locator('[data-state="ready"]')).waitFor({ timeout: 30_000 });
    await page.locator('[data-batch-progress] [data-count="ready"] [data-value]').filter({ hasText: '1' }).waitFor({ timeout: 30_000 });

    // a scan added meanwhile (by another person, here through the API) is counted as it is processed
    expect((await upload(editor, batchId, second.name, second.bytes)).status).toBe(201);
    await page.locator('[data-batch-progress] [data-count="ready"] [data-value]').filter({ hasText: '2' }).waitFor({ timeout: 90_000 });
    await page.locator('[data-batch-progress][data-settled="true"]').waitFor({ timeout: 30_000 });
    expect(await page.evaluate(() => (window as unknown as { notReloaded?: boolean }).notReloaded)).toBe(true);
    await page.close();
  });
});
