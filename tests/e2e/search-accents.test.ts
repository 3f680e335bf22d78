/**
 * Searching a batch ignores accents, as a relative typing on any keyboard expects: "Zoe" finds the
 * print captioned "Zoë", "Muller" the one with Müller in it, "Cuil" the place Cúil Aodha, "Sean" the
 * back of the print that says "Seán", and the other way round ("Zoë" finds a plain "Zoe"). Typed
 * into the batch page's search box in Chromium; the people list the caption form offers folds the
 * same way. Captions, names and places are invented for the test.
 */
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../db/index.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE, type Client } from '../support/http.ts';
import { fadedScans, readyBatch } from '../integration/review/helpers.ts';

let archive: TestArchive;
let editor: Client;
let browser: BrowserContext;
let page: Page;
let batchId: string;

beforeAll(async () => {
  archive = await makeArchive('search-accents');
  editor = asToken(archive.editor);
  let items: { id: string }[];
  ({ batchId, items } = await readyBatch(editor, 'Biscuit tin', await fadedScans(5, 1801)));
  const meta: Record<number, Record<string, unknown>> = {
    1: { caption: "Zoë's first day at school" },
    2: { caption: 'At the lake', people: ['Anna Müller'] },
    3: { caption: 'The hay field', place: 'Cúil Aodha' },
    4: { caption: 'Two on a bench', backText: 'Seán and Zoe, 1983' },
    5: { caption: 'The garden wall' },
  };
  for (const [seq, body] of Object.entries(meta)) {
    const r = await editor.request('PATCH', `/api/items/${items[Number(seq) - 1].id}/metadata`, { json: body });
    if (r.status !== 200) throw new Error(`captioning print ${seq} answered ${r.status}: ${r.text}`);
  }
  browser = await launchBrowser();
  page = await browser.newPage();
  await signInPage(page, archive.editor.email, TEST_PASSWORD);
}, 240_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

/** Waits until the table shows exactly these prints (the island asks the server for them). */
async function rowsBecome(seqs: number[]) {
  await page.waitForFunction((want) => {
    const got = [...document.querySelectorAll('[data-item-row]')].map((r) => Number(r.getAttribute('data-seq')));
    return JSON.stringify(got) === JSON.stringify(want) && !document.querySelector('[aria-busy="true"]');
  }, seqs, { timeout: 15_000 });
}

describe('searching without accents', () => {
  it('finds captions, people, places and the back of the print whether or not the accents are typed', async () => {
    await page.goto(`${BASE}/batches/${batchId}`);
    await page.waitForFunction(() => {
      const el = document.querySelector('[data-batch-table]');
      return Boolean(el && Object.keys(el).some((k) => k.startsWith('__reactFiber$')));
    }, undefined, { timeout: 15_000 });
    await rowsBecome([1, 2, 3, 4, 5]);
    const search = page.getByLabel('Search captions, people, places, the back of the print');

    // a caption "Zoë" and a back "Zoe": found by either spelling, in any case
    await search.fill('zoe');
    await rowsBecome([1, 4]);
    await snap(page, 'search-accents-zoe');
    await search.fill('ZOË');
    await rowsBecome([1, 4]);
    // a person
    await search.fill('Muller');
    await rowsBecome([2]);
    await search.fill('müller');
    await rowsBecome([2]);
    // a place and the back of the print
    await search.fill('cuil aodha');
    await rowsBecome([3]);
    await search.fill('Sean');
    await rowsBecome([4]);
    // accents are not dropped from what is shown, and a word nowhere still finds nothing
    await expect(page.locator('[data-item-row][data-seq="4"] [data-caption]').textContent()).resolves.toBe('Two on a bench');
    await search.fill('Zoltan');
    await rowsBecome([]);

    // the API answers the same
    const r = await editor.get(`/api/batches/${batchId}/items?q=${encodeURIComponent('zoe')}&view=rows`);
    expect(r.status).toBe(200);
    expect((r.body.items as { seq: number }[]).map((i) => i.seq)).toEqual([1, 4]);
  });

  it('offers a known person in the caption form when the name is typed without its accent', async () => {
    const r = await editor.get(`/api/people?q=${encodeURIComponent('anna mul')}`);
    expect(r.status).toBe(200);
    expect((r.body.people as { name: string }[]).map((p) => p.name)).toEqual(['Anna Müller']);
    const byWord = await editor.get(`/api/people?q=${encodeURIComponent('muller')}`);
    expect((byWord.body.people as { name: string }[]).map((p) => p.name)).toEqual(['Anna Müller']);
  });
});
