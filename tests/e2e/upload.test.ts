import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext } from 'playwright-core';
import { closeDb, Item } from '../../db/index.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { createBatch, generatedScans } from '../support/scans.ts';

let browser: BrowserContext;
let a: TestArchive;
beforeAll(async () => {
  a = await makeArchive('upload-e2e');
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

describe('the upload page', () => {
  it('takes five dropped scans, shows each one uploading, and follows them to ready for review', async () => {
    const batchId = await createBatch(asToken(a.editor), 'Envelope from the sideboard');
    const scans = await generatedScans(5, 2000);
    const page = await browser.newPage();
    await signInPage(page, a.editor.email, TEST_PASSWORD);
    await page.goto(`${BASE}/batches/${batchId}/upload`);
    await expect(page.locator('[data-limits]').textContent()).resolves.toMatch(/JPEG, TIFF or PNG scans, up to \d+ MB and \d+ megapixels each/);

    await page.locator('[data-testid="dropzone-input"]').setInputFiles(scans.map((s) => ({ name: s.name, mimeType: 'image/jpeg', buffer: s.bytes })));
    for (const s of scans) await page.locator(`[data-upload="${s.name}"][data-status="added"]`).waitFor({ timeout: 30_000 });
    await snap(page, 'upload-uploaded');
    for (const s of scans) await page.locator(`[data-upload="${s.name}"][data-state="ready"]`).waitFor({ timeout: 90_000 });
    await page.locator('[data-batch-progress][data-settled="true"]').waitFor({ timeout: 30_000 });
    await expect(page.locator('[data-batch-progress] [data-count="ready"] [data-value]').textContent()).resolves.toBe('5');
    await expect(page.locator('[data-upload-summary]').textContent()).resolves.toContain('5 uploaded');
    // one drop is one upload: its prints are numbered by file name, whatever order they arrived in
    const items = await Item.findAll({ where: { batchId }, order: [['seq', 'ASC']] });
    expect(new Set(items.map((i) => i.uploadKey)).size).toBe(1);
    expect(items[0].uploadKey).toBeTruthy();
    expect(items.map((i) => i.originalName)).toEqual(scans.map((s) => s.name));
    await snap(page, 'upload-ready');

    // The same files again are recognised, and a text file is refused with its reason.
    await page.locator('[data-testid="dropzone-input"]').setInputFiles([
      { name: 'again.jpg', mimeType: 'image/jpeg', buffer: scans[0].bytes },
      { name: 'list-of-names.jpg', mimeType: 'image/jpeg', buffer: Buffer.from('Uncle Tom, Lowmere pier, summer 1981 (invented)\n') },
    ]);
    await page.locator('[data-upload="again.jpg"][data-status="duplicate"]').waitFor();
    const refused = page.locator('[data-upload="list-of-names.jpg"][data-status="rejected"]');
    await refused.waitFor();
    await expect(refused.locator('[data-reason]').textContent()).resolves.toMatch(/text file.*only JPEG, PNG and TIFF/);

    // Coming back shows the server's state, not the browser's memory.
    await page.reload();
    await page.locator('[data-earlier-list]').waitFor();
    await expect(page.locator('[data-earlier-list] [data-state="ready"]').count()).resolves.toBe(5);
    await snap(page, 'upload-revisited');

    // The batch list shows the batch with its counts per state.
    await page.goto(`${BASE}/batches`);
    const card = page.locator('[data-batch="Envelope from the sideboard"]');
    await card.locator('[data-batch-progress][data-settled="true"]').waitFor();
    await expect(card.locator('[data-count="ready"] [data-value]').textContent()).resolves.toBe('5');
    await snap(page, 'batch-list');
    await page.close();
  }, 180_000);
});
