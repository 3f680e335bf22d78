/**
 * The pages every export carries, opened in Chromium from file:// with the network off, as a
 * relative would open them from a USB stick: every link and image resolves inside the unpacked
 * bag, the pages pass axe-core's accessibility rules, a person's page lists exactly their prints,
 * and the pages are covered by the bag's manifest (checked by coreutils' sha256sum).
 */
import { createRequire } from 'node:module';
import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { pathToFileURL, fileURLToPath } from 'node:url';
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../db/index.ts';
import { launchBrowser, snap } from '../support/browser.ts';
import { asToken, makeArchive, type TestArchive } from '../support/fixtures.ts';
import { sha256sumCheck, unpackWithUnzip } from '../support/outside-checks.ts';
import { createBatch, decide, downloadBytes, scan, uploadScan, waitExport, waitReady } from '../integration/export/helpers.ts';

const AXE = createRequire(import.meta.url).resolve('axe-core/axe.min.js');

let archive: TestArchive;
let browser: BrowserContext;
let page: Page;
let tmp: string;
let bag: string;
let pages: string[];
/** Requests that tried to leave the folder. */
const outside: string[] = [];

async function walk(dir: string): Promise<string[]> {
  const out: string[] = [];
  for (const e of await fs.readdir(dir, { withFileTypes: true })) {
    const p = path.join(dir, e.name);
    if (e.isDirectory()) out.push(...(await walk(p)));
    else out.push(p);
  }
  return out;
}

beforeAll(async () => {
  archive = await makeArchive('archive-pages');
  const editor = asToken(archive.editor);
  // invented for the demo
  const batchId = await createBatch(editor, 'Hall drawer', { sourceKind: 'drawer', sourceLabel: 'Hall drawer' });
  const ids: string[] = [];
  for (let i = 0; i < 4; i++) ids.push(await uploadScan(editor, batchId, `drawer-${i + 1}.jpg`, await scan(610 + i)));
  for (const id of ids) await waitReady(editor, id);
  await editor.patch(`/api/items/${ids[0]}/metadata`, { caption: 'Zoë on the swing', dateEdtf: 'July 1981', place: 'Strandhill', people: ['Zoë Hartigan'] });
  await editor.patch(`/api/items/${ids[1]}/metadata`, { caption: 'Zoë and Tom at the pier', dateEdtf: 'summer 1983', people: ['Zoë Hartigan', 'Tom Byrne'] });
  await editor.patch(`/api/items/${ids[2]}/metadata`, { caption: 'Tom with the new car <Ford>', dateEdtf: '1983', people: ['Tom Byrne'] });
  for (const id of ids) await decide(editor, id, 'accepted');
  const r = await editor.post('/api/exports', { selection: { kind: 'batch', batchId } });
  expect(r.status).toBe(202);
  const done = await waitExport(editor, r.headers.get('location')!);
  expect(done.state).toBe('ready');
  tmp = await fs.mkdtemp(path.join(os.tmpdir(), 'dl-archive-pages-'));
  bag = await unpackWithUnzip((await downloadBytes(editor, done.downloadUrl)).bytes, tmp);
  pages = (await walk(path.join(bag, 'data'))).filter((f) => f.endsWith('.html'));
  browser = await launchBrowser();
  await browser.setOffline(true);
  await browser.route('**/*', (route) => {
    const url = route.request().url();
    if (url.startsWith('file://')) return route.continue();
    outside.push(url);
    return route.abort();
  });
  page = await browser.newPage();
}, 400_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
  if (tmp) await fs.rm(tmp, { recursive: true, force: true });
});

describe('the pages inside an export', () => {
  it('start at index.html in the payload, and the manifest covers every page (sha256sum --check)', async () => {
    const index = path.join(bag, 'data', 'index.html');
    expect(pages).toContain(index);
    const manifest = await fs.readFile(path.join(bag, 'manifest-sha256.txt'), 'utf8');
    for (const p of pages) expect(manifest).toContain(` ${path.relative(bag, p)}\n`);
    const check = await sha256sumCheck(bag, 'manifest-sha256.txt');
    expect(check.code).toBe(0);
    // a page per year (1981, 1983 and the undated print), one for the drawer, one per person, the index and the about page
    expect(pages.length).toBe(3 + 1 + 2 + 2);
  });

  it('open from file:// with the network off: every link resolves, every image loads, no request leaves the folder', async () => {
    for (const file of pages) {
      await page.goto(pathToFileURL(file).href);
      expect(await page.locator('script').count()).toBe(0);
      // thumbnails load lazily: ask for all of them at once, then wait until each has loaded or failed
      await page.evaluate(() => document.querySelectorAll('img').forEach((img) => (img.loading = 'eager')));
      await page.waitForFunction(() => [...document.images].every((img) => img.complete));
      const broken = await page.evaluate(() => [...document.images].filter((img) => img.naturalWidth === 0).map((img) => img.getAttribute('src')));
      expect(broken, file).toEqual([]);
      const targets = await page.evaluate(() => [...document.querySelectorAll('a[href], link[href], img[src]')].map((el) => (el as HTMLAnchorElement).href || (el as HTMLImageElement).src));
      expect(targets.length).toBeGreaterThan(0);
      for (const t of targets) {
        expect(t.startsWith('file://'), `${file}: ${t}`).toBe(true);
        const target = fileURLToPath(t);
        expect(target.startsWith(path.join(bag, 'data')), `${file}: ${t}`).toBe(true);
        await expect(fs.stat(target), `${file}: ${t}`).resolves.toBeTruthy();
      }
    }
    expect(outside).toEqual([]);
  });

  it('pass the axe-core accessibility rules', async () => {
    for (const file of pages) {
      await page.goto(pathToFileURL(file).href);
      await page.addScriptTag({ path: AXE });
      const result = await page.evaluate(async () => (await (window as any).axe.run(document)).violations.map((v: any) => `${v.id}: ${v.nodes.map((n: any) => n.target.join(' ')).join(', ')}`));
      expect(result, file).toEqual([]);
    }
  });

  it('show on a person\u2019s page exactly the prints they are in, each opening its full corrected JPEG', async () => {
    await page.goto(pathToFileURL(path.join(bag, 'data', 'index.html')).href);
    await snap(page, 'archive-pages-01-index');
    const expected: Record<string, string[]> = { 'Zoë Hartigan': ['Zoë on the swing', 'Zoë and Tom at the pier'], 'Tom Byrne': ['Zoë and Tom at the pier', 'Tom with the new car <Ford>'] };
    for (const [person, captions] of Object.entries(expected)) {
      await page.goto(pathToFileURL(path.join(bag, 'data', 'index.html')).href);
      await page.getByRole('link', { name: person }).click();
      await page.waitForSelector('h1');
      expect(await page.locator('h1').innerText()).toBe(person);
      const shown = await page.locator('ul.prints > li > p').allInnerTexts();
      expect(shown.map((t) => t.replace(/^No\. \d+ /, '')).sort()).toEqual([...captions].sort());
      const photos = await page.locator('ul.prints > li > a').evaluateAll((as) => as.map((a) => (a as HTMLAnchorElement).href));
      for (const p of photos) expect(fileURLToPath(p)).toMatch(/\/data\/photos\/.+\.jpg$/);
    }
    await snap(page, 'archive-pages-02-person');
  });
});
