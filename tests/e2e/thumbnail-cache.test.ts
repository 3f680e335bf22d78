/**
 * Thumbnails are kept by the browser: the batch page names each by a versioned address, answered
 * with `Cache-Control: private, max-age=31536000, immutable`, so opening the page again asks the
 * server for none of them; the address changes when the thumbnail does (a saved correction gets
 * small copies of its own), and every request is still checked (signed out 401, another archive
 * 404). `private`: a family's photographs, never for a shared cache. In Chromium and over HTTP, on
 * generated scans (invented scenes).
 */
import type { BrowserContext } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../db/index.ts';
import { withStrength } from '../../src/lib/review/adjust.ts';
import { launchBrowser, signInPage } from '../support/browser.ts';
import { asToken, makeArchive, TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { BASE, Client } from '../support/http.ts';
import { until } from '../support/until.ts';
import { fadedScans, readyBatch } from '../integration/review/helpers.ts';

const KEPT = 'private, max-age=31536000, immutable';
let archive: TestArchive;
let stranger: TestArchive;
let editor: Client;
let batchId: string;
let items: { id: string; seq: number }[];
let browser: BrowserContext;

beforeAll(async () => {
  archive = await makeArchive('thumbnail-cache');
  stranger = await makeArchive('thumbnail-cache-other');
  editor = asToken(archive.editor);
  ({ batchId, items } = await readyBatch(editor, 'Wardrobe box', await fadedScans(4, 2001)));
  browser = await launchBrowser();
}, 240_000);
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

/** The bytes and caching of an image address, asked as the editor. */
async function image(path: string): Promise<{ bytes: Buffer; cacheControl: string | null }> {
  const res = await fetch(BASE + path, { headers: { authorization: `Bearer ${archive.editor.token}` } });
  expect(res.status).toBe(200);
  return { bytes: Buffer.from(await res.arrayBuffer()), cacheControl: res.headers.get('cache-control') };
}
const rows = async () => (await editor.get(`/api/batches/${batchId}/items?view=rows`)).body.items as { id: string; seq: number; thumbnail: string }[];

describe('thumbnails kept by the browser', () => {
  it('answers a versioned thumbnail address as kept for a year, and any other as revalidated, to its own archive only', async () => {
    const [first] = await rows();
    expect(first.thumbnail).toMatch(new RegExp(`^/api/items/${first.id}/thumbnail\\?v=[A-Za-z0-9_-]{16}$`));
    const kept = await editor.get(first.thumbnail, { accept: 'image/jpeg' });
    expect(kept.status).toBe(200);
    expect(kept.headers.get('cache-control')).toBe(KEPT);
    expect(kept.headers.get('content-type')).toBe('image/jpeg');
    // without the version, or with another, the same image is revalidated each time
    for (const path of [`/api/items/${first.id}/thumbnail`, `/api/items/${first.id}/thumbnail?v=AAAAAAAAAAAAAAAA`]) {
      const r = await editor.get(path, { accept: 'image/jpeg' });
      expect(r.status).toBe(200);
      expect(r.headers.get('cache-control')).toBe('private, no-cache');
    }
    // the address does not open the thumbnail to anyone else, and they are told not to keep anything
    const signedOut = await new Client().get(first.thumbnail, { accept: 'image/jpeg' });
    expect(signedOut.status).toBe(401);
    expect(signedOut.headers.get('cache-control') ?? '').not.toContain('max-age=31536000');
    const other = await asToken(stranger.owner).get(first.thumbnail, { accept: 'image/jpeg' });
    expect(other.status).toBe(404);
    expect(other.headers.get('content-type')).not.toBe('image/jpeg');
  });

  it('gives a print a new thumbnail address when a saved correction changes its thumbnail', async () => {
    const before = (await rows()).find((r) => r.id === items[1].id)!;
    const detail = (await editor.get(`/api/items/${items[1].id}`)).body.item;
    const saved = await editor.post(`/api/items/${items[1].id}/corrections`, { params: withStrength(detail.current, 0.4), basedOnVersion: detail.currentVersion });
    expect(saved.status).toBe(202);
    const after = await until('the saved correction to get its own thumbnail', async () => {
      const r = (await rows()).find((x) => x.id === items[1].id)!;
      return r.thumbnail !== before.thumbnail ? r : null;
    }, 90_000);
    const [oldImage, newImage] = await Promise.all([image(before.thumbnail), image(after.thumbnail)]);
    expect(newImage.cacheControl).toBe(KEPT);
    // the old address now serves the new thumbnail, which it does not name: not to be kept
    expect(oldImage.cacheControl).toBe('private, no-cache');
    expect(oldImage.bytes.equals(newImage.bytes)).toBe(true);
  });

  it('opens the batch page again without asking the server for its thumbnails', async () => {
    const page = await browser.newPage();
    await signInPage(page, archive.editor.email, TEST_PASSWORD);
    const network = await page.context().newCDPSession(page);
    await network.send('Network.enable');
    // thumbnails the browser asked the server for: every request but those it served from its cache
    const sent = new Map<string, string>();
    const fromCache = new Set<string>();
    network.on('Network.requestWillBeSent', (e: { requestId: string; request: { url: string } }) => {
      if (e.request.url.includes('/thumbnail')) sent.set(e.requestId, e.request.url);
    });
    network.on('Network.requestServedFromCache', (e: { requestId: string }) => fromCache.add(e.requestId));
    const asked = () => [...sent].filter(([id]) => !fromCache.has(id)).map(([, url]) => url);
    const allShown = () =>
      page.waitForFunction((n) => {
        const imgs = [...document.querySelectorAll<HTMLImageElement>('[data-item-row] img')];
        return imgs.length === n && imgs.every((i) => i.complete && i.naturalWidth > 0);
      }, items.length, { timeout: 30_000 });
    await page.goto(`${BASE}/batches/${batchId}`);
    await allShown();
    expect(asked()).toHaveLength(items.length);
    // a new visit to the page, as after reviewing a print
    await page.goto(`${BASE}/items/${items[0].id}`, { waitUntil: 'networkidle' });
    sent.clear();
    await page.goto(`${BASE}/batches/${batchId}`);
    await allShown();
    await page.waitForLoadState('networkidle');
    expect([...sent.values()]).toHaveLength(items.length);
    expect(asked()).toEqual([]);
    await network.detach();
    await page.close();
  });
});
