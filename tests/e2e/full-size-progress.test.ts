/**
 * The batch page's count of full-size corrected images tells the truth while the batch settles: the
 * prints' own proposals are rendered first, then the batch's shared (pooled) estimate replaces most
 * of them and they are rendered again. The count never goes back; while they are made again the
 * page says so and why. Watched in Chromium on the page the archivist keeps open, and by polling the
 * status the page reads. Scans are generated (invented scenes, aged with the engine's density model).
 */
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Correction, Item, closeDb } from '../../db/index.ts';
import { derivedKeys } from '../../src/lib/server/processing.ts';
import { storage } from '../../src/lib/server/storage.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE, type Client } from '../support/http.ts';
import { createBatch, uploadAll } from '../support/scans.ts';
import { until } from '../support/until.ts';
import { fadedScans } from '../integration/review/helpers.ts';

const PRINTS = 6;
let archive: TestArchive;
let editor: Client;
let browser: BrowserContext;
let page: Page;

beforeAll(async () => {
  archive = await makeArchive('full-size-progress');
  editor = asToken(archive.editor);
  browser = await launchBrowser();
  page = await browser.newPage();
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
}, 120_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

describe('the full-size count while the batch settles', () => {
  it("never goes back when the batch's shared estimate replaces rendered corrections, and says why they are made again", async () => {
    // large enough that rendering them again takes a moment to watch
    const scans = await fadedScans(PRINTS, 1701, { width: 2400, height: 1600 });
    const batchId = await createBatch(editor, 'Sideboard envelope');
    await page.goto(`${BASE}/batches/${batchId}`);
    // every figure and note the page shows, as it changes
    await page.locator('[data-batch-progress]').waitFor();
    await page.evaluate(() => {
      const seen: { made: number; remaking: number; text: string }[] = [];
      (window as unknown as { fullSizeSeen: typeof seen }).fullSizeSeen = seen;
      const record = () => {
        const line = document.querySelector('[data-count="full-size"]');
        if (!line) return;
        const entry = { made: Number(line.getAttribute('data-made')), remaking: Number(line.getAttribute('data-remaking')), text: line.textContent ?? '' };
        const last = seen[seen.length - 1];
        if (!last || last.text !== entry.text) seen.push(entry);
      };
      new MutationObserver(record).observe(document.body, { subtree: true, childList: true, characterData: true, attributes: true });
      record();
    });

    const replies = await uploadAll(editor, batchId, scans, 2);
    expect(replies.map((r) => r.status)).toEqual(scans.map(() => 201));

    // the status the page reads, polled often, from the first analysis to the last render
    const polled: { made: number; fullSize: number; remaking: number; remakingShared: number; ready: number }[] = [];
    const settledAndRendered = await until(
      'every print rendered at the correction it has after the batch settled',
      async () => {
        const r = await editor.get(`/api/batches/${batchId}`);
        if (r.status !== 200) return null;
        const c = r.body.counts;
        polled.push({ made: c.fullSize + c.remaking, fullSize: c.fullSize, remaking: c.remaking, remakingShared: c.remakingShared, ready: c.ready });
        return r.body.finishedNotifiedAt && c.ready === PRINTS && c.fullSize === PRINTS ? r.body : null;
      },
      240_000,
      () => JSON.stringify(polled.slice(-3)),
    );
    expect(settledAndRendered.counts.remaking).toBe(0);

    // the batch's estimate did replace corrections that had been rendered already
    const items = await Item.findAll({ where: { batchId } });
    const replaced: string[] = [];
    for (const item of items) {
      const current = await Correction.findOne({ where: { itemId: item.id, version: item.currentVersion! } });
      if (current?.origin === 'pooled' && item.currentVersion! > 1 && (await storage().exists(derivedKeys.render(item.id, 1)))) replaced.push(item.id);
    }
    expect(replaced.length).toBeGreaterThan(0);

    // the status never counted fewer made images than before
    for (let n = 1; n < polled.length; n++) expect(polled[n].made, JSON.stringify(polled.slice(Math.max(0, n - 2), n + 1))).toBeGreaterThanOrEqual(polled[n - 1].made);
    for (const p of polled) expect(p.remakingShared).toBeLessThanOrEqual(p.remaking);

    // nor did the page, which ends with every image made and none being made again
    await page.waitForFunction((n) => document.querySelector('[data-count="full-size"]')?.getAttribute('data-made') === String(n) && document.querySelector('[data-count="full-size"]')?.getAttribute('data-remaking') === '0', PRINTS, { timeout: 30_000 });
    const seen = (await page.evaluate(() => (window as unknown as { fullSizeSeen: { made: number; remaking: number; text: string }[] }).fullSizeSeen)) ?? [];
    expect(seen.length).toBeGreaterThan(0);
    for (let n = 1; n < seen.length; n++) expect(seen[n].made, JSON.stringify(seen.slice(n - 1, n + 1))).toBeGreaterThanOrEqual(seen[n - 1].made);
    expect(seen[seen.length - 1].text).toContain(`Full-size corrected images: ${PRINTS} of ${PRINTS}`);
    // while some were made again, the page said how many and why
    for (const s of seen.filter((e) => e.remaking > 0)) expect(s.text).toMatch(new RegExp(`${s.remaking} of them being made again (with the batch's shared estimate|with a newer correction|:)`));
    const sharedSeen = polled.some((p) => p.remakingShared > 0);
    console.log(`full-size progress: ${polled.length} polls, ${sharedSeen ? 'saw' : 'did not see'} prints being made again with the shared estimate; page states: ${seen.map((s) => `${s.made}/${s.remaking}`).join(' ')}`);
    await snap(page, 'full-size-progress');
  }, 300_000);
});
