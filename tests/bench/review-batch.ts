/**
 * The batch page of a large batch, for `npm run bench:review` (tests/bench/review.ts runs it first):
 * prints figures, asserts nothing.
 *
 * One generated scan goes through the real upload and worker so its analysis has the engine's own
 * shape; then BENCH_PRINTS (1,000) prints are put straight into the database as that analysis with
 * varied fading, paper tint and dye loss, each with an original of its own (a small generated
 * JPEG, also its thumbnail), and invented captions, dates, places and people on some. Measured:
 *  - batch_page_ms: Chromium, from asking for /batches/<id> to the table island hydrated (median
 *    of BENCH_PAGE_RUNS loads); batch_page_server_ms: the HTML alone over HTTP (median);
 *    batch_page_html_kb and batch_page_elements (every element of the document once hydrated).
 *    Floor: the same page of a batch with no prints, in the same run.
 *  - scroll_frame_p95_ms / scroll_frame_max_ms: requestAnimationFrame intervals while the wheel
 *    scrolls the page from top to bottom. Floor: the Guide (text, no islands) scrolled the same way.
 *  - revisit_scroll_frame_p95_ms, revisit_thumbnail_requests: the page opened again and scrolled, and
 *    how many of its thumbnails the browser asked the server for again (none when they are kept).
 *  - page_turn_ms (Next to the new rows on screen), search_ms (typing a word to the matches on
 *    screen), items_api_kb / items_api_ms (one default page of the API), search_api_ms.
 *    Floor: GET /api/me, the cheapest signed-in JSON answer.
 *  - chart_elements: elements of the batch chart's SVGs.
 * Targets (the product's own): the 1,000-print batch page in under a second, scrolling p95 within
 * a frame or two of the floor.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { Readable } from 'node:stream';
import type { BrowserContext, Page } from 'playwright-core';
import sharp from 'sharp';
import { Batch, Item, ItemPerson, Original, Person } from '../../db/index.ts';
import { openDatabase } from '../../src/lib/server/database.ts';
import { AGEING_MODELS, syntheticScan } from '../../src/lib/demo/synthetic.ts';
import { storage } from '../../src/lib/server/storage.ts';
import { TEST_PASSWORD, type TestArchive } from '../support/fixtures.ts';
import { launchBrowser, signInPage } from '../support/browser.ts';
import { Client, signedIn } from '../support/http.ts';

openDatabase();

const BASE = process.env.APP_URL!;
const PRINTS = Number(process.env.BENCH_PRINTS ?? 1000);
const PAGE_RUNS = Number(process.env.BENCH_PAGE_RUNS ?? 5);
const API_RUNS = 10;
const CAPTIONS = ['Picnic at Lough Arrow', 'Zoë on her first bicycle', 'Grandad in the garden', 'The new car', 'Christmas at the farm', 'Máire and Tom on the pier', 'First day at school', 'Bonfire night'];
const PLACES = ['Sligo', 'Lough Key', 'Boyle', 'Strandhill', null];
const DATES = ['1981', '1981~', '198X', '1979-07', '1983-22', null, null];
const PEOPLE = ['Máire', 'Tom Byrne', 'Zoë', 'Grandad', 'Aunt Nora'];

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
const p95 = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.floor(0.95 * s.length))];
};
const fmt = (x: number) => x.toFixed(1);

/** A small deterministic generator, so every run seeds the same batch. */
function random(seed: number) {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** One scan through the real pipeline: its analysis is the template of the seeded ones. */
export async function analysedTemplate(client: Client): Promise<Record<string, any>> {
  const scan = await syntheticScan({ width: 900, height: 600, seed: 41, border: true, ageing: AGEING_MODELS.darkStorage(0.6), format: 'jpeg', quality: 90 });
  const b = await client.post('/api/batches', { name: `Template ${Date.now()}`, sourceKind: 'drawer' });
  const up = await client.request('POST', `/api/batches/${b.body.id}/files`, { body: new Uint8Array(scan), headers: { 'content-type': 'application/octet-stream', 'x-file-name': 'template.jpg' } });
  if (up.status !== 201) throw new Error(`upload answered ${up.status}: ${up.text}`);
  const deadline = Date.now() + 180_000;
  while (Date.now() < deadline) {
    const r = await client.get(`/api/items/${up.body.item.id}`);
    if (r.body?.item?.state === 'ready') return (await Item.findByPk(up.body.item.id))!.analysis as Record<string, any>;
    if (r.body?.item?.state === 'failed') throw new Error(`the template scan failed: ${r.body.item.failureReason}`);
    await new Promise((res) => setTimeout(res, 300));
  }
  throw new Error('the template scan was not ready in time');
}

/** A batch of `count` prints put straight into the database, analysed like `template` but each faded its own way. */
export async function seedBatch(archive: TestArchive, name: string, count: number, template: Record<string, any>): Promise<string> {
  const batch = await Batch.create({ archiveId: archive.id, name, sourceKind: 'box', sourceLabel: 'Shoebox 3', createdBy: archive.editor.id });
  const rnd = random(count + 7);
  const store = storage();
  const people = await Promise.all(PEOPLE.map((n) => Person.create({ archiveId: archive.id, name: n, createdBy: archive.editor.id })));
  const grades = ['none', 'slight', 'moderate', 'severe'] as const;
  for (let start = 0; start < count; start += 100) {
    const originals: { archiveId: string; sha256: string; storageKey: string; bytes: number; mime: string; width: number; height: number; createdBy: string }[] = [];
    for (let i = start; i < Math.min(count, start + 100); i++) {
      // a tint of its own with a little noise, so no two scans have the same bytes
      const px = Buffer.alloc(96 * 64 * 3);
      const noise = random(i + 1);
      for (let k = 0; k < px.length; k += 3) {
        px[k] = 150 + (i % 60) + noise() * 40;
        px[k + 1] = 120 + ((i * 7) % 60) + noise() * 40;
        px[k + 2] = 90 + ((i * 13) % 60) + noise() * 40;
      }
      const jpeg = await sharp(px, { raw: { width: 96, height: 64, channels: 3 } }).jpeg({ quality: 80 }).toBuffer();
      const blob = await store.putContentAddressed('originals', Readable.from([jpeg]), { ext: '.jpg' });
      originals.push({ archiveId: archive.id, sha256: blob.sha256, storageKey: blob.key, bytes: blob.bytes, mime: 'image/jpeg', width: 96, height: 64, createdBy: archive.editor.id });
    }
    const made = await Original.bulkCreate(originals);
    const rows = made.map((o, k) => {
      const i = start + k;
      const loss = Math.min(0.7, Math.pow(rnd(), 1.5) * 0.65);
      const stain = rnd() * 0.25;
      const grade = grades[loss < 0.04 ? 0 : loss < 0.15 ? 1 : loss < 0.3 ? 2 : 3];
      const tint = 1 + stain * 40 + rnd() * 2;
      const a = structuredClone(template);
      a.dyeLoss = Math.round(loss * 1e4) / 1e4;
      a.fadeGrade = grade;
      a.expectedDeltaE00 = Math.round((1 + rnd() * 7) * 100) / 100;
      a.paperBase = { ...a.paperBase, deltaE00FromWhite: tint, srgb: [0.93 + rnd() * 0.05, 0.88 + rnd() * 0.06, 0.7 + (1 - stain * 3) * 0.2] };
      for (const d of ['cyan', 'magenta', 'yellow']) if (a.dyes?.[d]) a.dyes[d] = { ...a.dyes[d], remainingPercent: Math.round((100 - loss * 100 * rnd()) * 100) / 100 };
      return {
        archiveId: archive.id,
        batchId: batch.id,
        originalId: o.id,
        seq: i + 1,
        originalName: `scan_${String(i + 1).padStart(4, '0')}.jpg`,
        state: 'ready' as const,
        analysis: a,
        fadeGrade: grade,
        thumbKey: o.storageKey,
        previewKey: o.storageKey,
        caption: rnd() < 0.6 ? `${CAPTIONS[i % CAPTIONS.length]} (${i + 1})` : null,
        dateEdtf: DATES[i % DATES.length],
        place: PLACES[i % PLACES.length],
        backText: i % 9 === 0 ? 'Kodak paper · developed at the chemist on Main Street' : null,
        decision: rnd() < 0.3 ? ('accepted' as const) : null,
        decidedBy: null,
      };
    });
    const items = await Item.bulkCreate(rows.map((r) => ({ ...r, decidedBy: r.decision ? archive.editor.id : null, decidedAt: r.decision ? new Date() : null })));
    const tags = items.flatMap((it, k) => ((start + k) % 3 === 0 ? [] : [{ itemId: it.id, personId: people[(start + k) % people.length].id, position: 0 }]));
    await ItemPerson.bulkCreate(tags);
  }
  return batch.id;
}

/** Milliseconds from asking for `url` to the batch table island hydrated. */
async function loadPage(page: Page, url: string): Promise<number> {
  const t0 = performance.now();
  await page.goto(url, { waitUntil: 'commit' });
  await page.waitForFunction(() => {
    const el = document.querySelector('[data-batch-table]');
    return Boolean(el && Object.keys(el).some((k) => k.startsWith('__reactFiber$')));
  }, null, { timeout: 60_000, polling: 'raf' });
  return performance.now() - t0;
}

/** rAF intervals while `during` runs in the page. */
async function frames(page: Page, during: () => Promise<void>): Promise<number[]> {
  await page.evaluate(() => {
    const w = window as unknown as { __frames: number[]; __recording: boolean; __ticking?: boolean };
    w.__frames = [];
    w.__recording = true;
    if (!w.__ticking) {
      w.__ticking = true;
      const tick = (t: number) => {
        if (w.__recording) w.__frames.push(t);
        requestAnimationFrame(tick);
      };
      requestAnimationFrame(tick);
    }
  });
  await during();
  const ts = await page.evaluate(() => {
    const w = window as unknown as { __frames: number[]; __recording: boolean };
    w.__recording = false;
    return w.__frames;
  });
  return ts.slice(1).map((t, i) => t - ts[i]);
}

async function apiTimes(client: Client, path: string): Promise<{ ms: number; kb: number; body: any }> {
  const times: number[] = [];
  let last: { text: string; body: any } = { text: '', body: null };
  for (let i = 0; i < API_RUNS; i++) {
    const t0 = performance.now();
    const r = await client.get(path);
    times.push(performance.now() - t0);
    if (r.status !== 200) throw new Error(`${path} answered ${r.status}: ${r.text.slice(0, 200)}`);
    last = r;
  }
  return { ms: median(times), kb: Buffer.byteLength(last.text) / 1024, body: last.body };
}

/** Seeds the batches, measures, prints the figures. */
export async function benchBatchPage(archive: TestArchive): Promise<void> {
  const browser = await launchBrowser({ viewport: { width: 1600, height: 1000 } });
  try {
    await measure(archive, browser);
  } finally {
    await browser.close();
  }
}

async function measure(archive: TestArchive, browser: BrowserContext): Promise<void> {
  const client = new Client(archive.editor.token);
  const template = await analysedTemplate(client);
  const s0 = performance.now();
  const batchId = await seedBatch(archive, `Bench ${PRINTS} prints`, PRINTS, template);
  const emptyId = (await Batch.create({ archiveId: archive.id, name: 'Bench empty batch', sourceKind: 'box', sourceLabel: '', createdBy: archive.editor.id })).id;
  console.log(`seeded ${PRINTS} prints in ${((performance.now() - s0) / 1000).toFixed(1)} s (not counted)`);

  const session = await signedIn(archive.editor.email, TEST_PASSWORD);
  const html = async (id: string) => {
    const times: number[] = [];
    let text = '';
    for (let i = 0; i < API_RUNS; i++) {
      const t0 = performance.now();
      const r = await session.get(`/batches/${id}`, { accept: 'text/html' });
      times.push(performance.now() - t0);
      if (r.status !== 200) throw new Error(`the batch page answered ${r.status}`);
      text = r.text;
    }
    return { ms: median(times), kb: Buffer.byteLength(text) / 1024 };
  };
  const fullHtml = await html(batchId);
  const emptyHtml = await html(emptyId);

  const page = await browser.newPage();
  await page.addInitScript('window.__name = (f) => f');
  await signInPage(page, archive.editor.email, TEST_PASSWORD);

  const countElements = () => page.evaluate(() => document.querySelectorAll('*').length);
  const loads: number[] = [];
  const emptyLoads: number[] = [];
  for (let i = 0; i < PAGE_RUNS; i++) {
    emptyLoads.push(await loadPage(page, `${BASE}/batches/${emptyId}`));
    loads.push(await loadPage(page, `${BASE}/batches/${batchId}`));
  }
  const elements = await countElements();
  const chartElements = await page.evaluate(() => document.querySelectorAll('[data-batch-chart] svg *').length);
  const chartKind = await page.locator('[data-scatter]').getAttribute('data-scatter');
  // what the chart and the first rows look like at this size, kept with the tests' screenshots
  fs.mkdirSync(path.resolve('tests/artifacts'), { recursive: true });
  await page.screenshot({ path: path.resolve('tests/artifacts/bench-batch-page.png') });

  const scrollDown = () =>
    frames(page, async () => {
      const height = await page.evaluate(() => document.documentElement.scrollHeight);
      await page.mouse.move(800, 500);
      for (let y = 0; y < height; y += 120) await page.mouse.wheel(0, 120);
      await page.waitForFunction(() => window.scrollY + window.innerHeight >= document.documentElement.scrollHeight - 2);
    });
  // floor for scrolling: the Guide, a long page of text without islands, scrolled the same way
  await page.goto(`${BASE}/guide`, { waitUntil: 'load' });
  const guideScroll = await scrollDown();
  await loadPage(page, `${BASE}/batches/${batchId}`);
  await page.waitForLoadState('networkidle');
  const idle = await frames(page, () => page.waitForTimeout(1500));
  const scroll = await scrollDown();
  // again, once every thumbnail has come: what is left is drawing the rows themselves
  await page.waitForLoadState('networkidle');
  await page.evaluate(() => window.scrollTo(0, 0));
  const scrollAgain = await scrollDown();
  // a later visit (the page opened again, as after reviewing a print): every thumbnail of the page
  // has been seen; the ones the browser still asks the server about (a revalidation each) are counted
  const network = await page.context().newCDPSession(page);
  await network.send('Network.enable');
  const thumbnailRequests = new Set<string>();
  const servedFromCache = new Set<string>();
  network.on('Network.requestWillBeSent', (e: { requestId: string; request: { url: string } }) => {
    if (e.request.url.includes('/thumbnail')) thumbnailRequests.add(e.requestId);
  });
  network.on('Network.requestServedFromCache', (e: { requestId: string }) => servedFromCache.add(e.requestId));
  await loadPage(page, `${BASE}/batches/${batchId}`);
  const revisit = await scrollDown();
  await page.waitForLoadState('networkidle');
  await network.detach();
  const thumbnailsAsked = [...thumbnailRequests].filter((id) => !servedFromCache.has(id)).length;

  // page turn: Next to the new rows on screen
  const turns: number[] = [];
  for (let i = 0; i < 5; i++) {
    const before = await page.locator('[data-item-row]').first().getAttribute('data-seq');
    const t0 = performance.now();
    await page.locator('[data-pager="top"] [data-page-next]').click();
    await page.waitForFunction((b) => document.querySelector('[data-item-row]')?.getAttribute('data-seq') !== b && !document.querySelector('[aria-busy="true"]'), before, { polling: 'raf' });
    turns.push(performance.now() - t0);
  }
  // a search typed in: from the last key to the matches on screen (the island waits for a pause in the typing first)
  const searches: number[] = [];
  for (const word of ['lough', 'bicycle', 'grandad', 'chemist', 'pier']) {
    await loadPage(page, `${BASE}/batches/${batchId}`);
    const box = page.getByLabel('Search captions, people, places, the back of the print');
    await box.fill(word);
    const t0 = performance.now();
    await page.waitForFunction((w) => new URL(location.href).searchParams.get('q') === w && !document.querySelector('[aria-busy="true"]'), word, { polling: 'raf' });
    searches.push(performance.now() - t0);
  }

  const me = await apiTimes(client, '/api/me');
  const items = await apiTimes(client, `/api/batches/${batchId}/items`);
  const rows = await apiTimes(client, `/api/batches/${batchId}/items?view=rows`);
  const big = await apiTimes(client, `/api/batches/${batchId}/items?per=500`);
  const search = await apiTimes(client, `/api/batches/${batchId}/items?q=lough+tom&missing=date`);
  await page.close();

  console.log(`batch page of ${PRINTS} prints (50 rows a page), ${chartKind} chart; floor: the page of an empty batch`);
  console.log(`machine_load_1min: ${os.loadavg()[0].toFixed(1)} (${os.cpus().length} cores; figures stretch with it)`);
  console.log(`batch_page_ms: ${fmt(median(loads))} (floor ${fmt(median(emptyLoads))}; Chromium, request to table hydrated, median of ${PAGE_RUNS})`);
  console.log(`batch_page_server_ms: ${fmt(fullHtml.ms)} (floor ${fmt(emptyHtml.ms)}; HTML alone, median of ${API_RUNS})`);
  console.log(`batch_page_html_kb: ${fmt(fullHtml.kb)} (floor ${fmt(emptyHtml.kb)})`);
  console.log(`batch_page_elements: ${elements}`);
  console.log(`chart_elements: ${chartElements}`);
  console.log(`idle_frame_p95_ms: ${fmt(p95(idle))}`);
  console.log(`scroll_frame_p95_ms: ${fmt(p95(scroll))} (floor ${fmt(p95(guideScroll))}, the Guide scrolled the same way; ${scroll.length} frames)`);
  console.log(`scroll_frame_max_ms: ${fmt(Math.max(...scroll))}`);
  console.log(`scroll_again_frame_p95_ms: ${fmt(p95(scrollAgain))} (the same scroll with every thumbnail loaded; max ${fmt(Math.max(...scrollAgain))})`);
  console.log(`revisit_scroll_frame_p95_ms: ${fmt(p95(revisit))} (the page opened again and scrolled; max ${fmt(Math.max(...revisit))})`);
  console.log(`revisit_thumbnail_requests: ${thumbnailsAsked} (thumbnails of that visit the browser asked the server for, of ${Math.min(PRINTS, 50)} rows)`);
  console.log(`page_turn_ms: ${fmt(median(turns))} (Next to new rows on screen, median of ${turns.length})`);
  console.log(`search_ms: ${fmt(median(searches))} (typed word to matches on screen, incl. the 250 ms typing pause; median of ${searches.length})`);
  console.log(`items_api_ms: ${fmt(items.ms)} (floor ${fmt(me.ms)}, GET /api/me)`);
  console.log(`items_api_kb: ${fmt(items.kb)} (one page of ${items.body.items.length} of ${items.body.total}; rows view ${fmt(rows.kb)} kB for ${rows.body.items.length})`);
  console.log(`items_api_per500_ms: ${fmt(big.ms)} (${fmt(big.kb)} kB, the largest page allowed)`);
  console.log(`search_api_ms: ${fmt(search.ms)} (floor ${fmt(me.ms)}; two words and a filter over ${PRINTS} prints, ${search.body.total} match)`);
}
