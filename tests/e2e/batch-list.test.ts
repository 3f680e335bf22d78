import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext } from 'playwright-core';
import { closeDb } from '../../db/index.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { createBatch } from '../support/scans.ts';
import { until } from '../support/until.ts';

let a: TestArchive;
let browser: BrowserContext;
beforeAll(async () => {
  a = await makeArchive('many-batches');
  for (let i = 1; i <= 9; i++) await createBatch(asToken(a.editor), `Shoebox ${i}`);
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

describe('the batch list', () => {
  it('shows many batches without holding a connection open per batch, so the page stays usable', async () => {
    const page = await browser.newPage();
    const streams: string[] = [];
    page.on('request', (r) => {
      const path = new URL(r.url()).pathname;
      if (path.endsWith('/events')) streams.push(path);
    });
    await signInPage(page, a.owner.email, TEST_PASSWORD);
    await page.goto(`${BASE}/batches`, { waitUntil: 'load', timeout: 15_000 });
    await expect(page.locator('[data-batch]').count()).resolves.toBe(9);
    // Every entry's progress island hydrated (they hydrate when visible), so each has had its chance
    // to open a stream; React marks the elements it has taken over.
    for (const entry of await page.locator('[data-batch]').all()) await entry.scrollIntoViewIfNeeded();
    await page.waitForFunction(
      () => {
        const bars = [...document.querySelectorAll('[data-batch-progress]')];
        return bars.length === 9 && bars.every((el) => Object.keys(el).some((k) => k.startsWith('__reactFiber$')));
      },
      null,
      { timeout: 30_000 },
    );
    // A browser keeps at most six connections to one host: one event stream per batch would starve
    // the page. The list follows all its batches on one stream of the archive's.
    await until('the list to follow its batches', async () => streams.length > 0, 30_000);
    expect([...new Set(streams)]).toEqual(['/api/batches/events']);
    await page.getByRole('link', { name: 'Team' }).click();
    await page.waitForURL(/\/team/, { timeout: 10_000 });
    await snap(page, 'batch-list-many');
    await page.close();
  });
});
