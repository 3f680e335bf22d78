/**
 * A relative on a phone, in Chromium at 390 CSS pixels wide with touch: the invitation from the
 * mail, the batch, one print, and a suggested caption, date and people, with no page wider than
 * the screen and no editing control a viewer cannot use. Also the Guide's coloured words, whose
 * contrast is computed from the colours the browser renders. Screenshots go to tests/artifacts/.
 */
import type { BrowserContext, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../db/index.ts';
import { contrastRatio } from '../../src/lib/review/dye-words.ts';
import { launchBrowser, PHONE, snap } from '../support/browser.ts';
import { asToken, makeArchive, type TestArchive } from '../support/fixtures.ts';
import { BASE } from '../support/http.ts';
import { waitForMail } from '../support/outbox.ts';
import { batchWithPrints } from '../integration/export/helpers.ts';

let archive: TestArchive;
let phone: BrowserContext;
let page: Page;
let batchId: string;
let items: string[];
let invitation: string;
const email = `cousin.phone.${Date.now()}@hartigan.example`;
/** Script errors the pages raised: none is expected. */
const scriptErrors: string[] = [];

beforeAll(async () => {
  archive = await makeArchive('relatives-phone');
  ({ batchId, itemIds: items } = await batchWithPrints(asToken(archive.editor), 'Sideboard album', 2, 91));
  const sent = await asToken(archive.owner).post('/api/team/invitations', { email, role: 'viewer' });
  expect(sent.status).toBe(201);
  invitation = (await waitForMail(email, /invited/)).links.find((l) => l.includes('/invite/'))!;
  phone = await launchBrowser(PHONE);
  page = await phone.newPage();
  page.on('pageerror', (err) => scriptErrors.push(`${page.url()}: ${err.message}`));
}, 300_000);
afterAll(async () => {
  await phone?.close();
  await closeDb();
});

/**
 * How far the page reaches past the right edge of the phone's screen, in CSS pixels (0: no
 * sideways scroll). Measured against the phone's width, not window.innerWidth: a phone browser
 * zooms out to show a page wider than the screen, and innerWidth then grows with it.
 */
const overflow = (p: Page) => p.evaluate((w) => Math.max(document.documentElement.scrollWidth, document.body.scrollWidth) - w, PHONE.viewport.width);

/** The elements that reach past the right edge, for the failure message. */
const widest = (p: Page) =>
  p.evaluate((w) =>
    [...document.querySelectorAll<HTMLElement>('body *')]
      .filter((el) => el.getBoundingClientRect().right > w + 1)
      .slice(0, 8)
      .map((el) => `${el.tagName.toLowerCase()}${el.className && typeof el.className === 'string' ? `.${el.className.split(' ').slice(0, 3).join('.')}` : ''} → ${Math.round(el.getBoundingClientRect().right)}px`)
      .join('\n'),
  PHONE.viewport.width);

async function fitsTheScreen(p: Page, what: string) {
  const extra = await overflow(p);
  if (extra > 0) await snap(p, `phone-too-wide-${what}`);
  expect(extra, `${what} is ${extra}px wider than the phone:\n${await widest(p)}`).toBeLessThanOrEqual(0);
}

describe('a relative on a phone', () => {
  it('accepts the invitation from the mail and lands on the batches, all within the screen', async () => {
    await page.goto(invitation);
    await fitsTheScreen(page, 'invitation');
    await page.getByLabel('Your name').fill('Cousin Orla');
    await page.getByLabel(/Choose a password/).fill('a long enough password');
    await page.getByRole('button', { name: /Join the/ }).tap();
    await page.waitForURL(/\/batches/);
    await page.locator(`a[href="/batches/${batchId}"]`).first().waitFor();
    await fitsTheScreen(page, 'batches');
    await snap(page, 'phone-01-batches');
  });

  it('opens the batch and a print, sees the print, and no controls a viewer cannot use', async () => {
    await page.locator(`a[href="/batches/${batchId}"]`).first().tap();
    await page.waitForURL(`**/batches/${batchId}`);
    await page.locator(`a[href="/items/${items[0]}"]`).first().waitFor();
    await fitsTheScreen(page, 'batch');
    await snap(page, 'phone-02-batch');
    await page.locator(`a[href="/items/${items[0]}"]`).first().tap();
    await page.waitForURL(`**/items/${items[0]}`);
    await page.waitForSelector('[data-compare-view]', { timeout: 15_000 }).catch(() => undefined);
    expect(scriptErrors).toEqual([]);
    await page.waitForSelector('[data-compare-view]');
    await fitsTheScreen(page, 'print');
    await snap(page, 'phone-03-print');
    // the print itself is on the screen, not pushed off it
    const frame = await page.locator('[data-compare-view]').boundingBox();
    expect(frame!.width).toBeGreaterThan(300);
    expect(frame!.x + frame!.width).toBeLessThanOrEqual(390);
    // no sliders, no white-point pick, no saving or deciding: a viewer suggests, an editor edits
    // (the split line's own slider only moves the view)
    expect(await page.locator('input[type="range"]:not([aria-label="Split line position"])').count()).toBe(0);
    expect(await page.locator('[data-adjust-panel]').count()).toBe(0);
    expect(await page.locator('[data-pick-white]').count()).toBe(0);
    expect(await page.getByRole('button', { name: /on the print \(W\)/ }).count()).toBe(0);
    expect(await page.locator('[data-save-correction]').count()).toBe(0);
    expect(await page.getByRole('button', { name: /^Accept/ }).count()).toBe(0);
  });

  it('suggests a caption, a date in words and the people shown, which reach the editors as one pending suggestion', async () => {
    await page.getByRole('link', { name: /Suggest a caption/ }).tap();
    await page.waitForURL(`**/batches/${batchId}/captions**`);
    await page.waitForSelector('[data-caption-form]');
    await fitsTheScreen(page, 'captions');
    // the form opens at the print the relative was looking at
    await expect(page.locator('#caption-heading').innerText()).resolves.toContain('print 1 of 2');
    await page.getByLabel('Caption').fill('Zoë and Granny at the sideboard');
    await page.locator('#f-date').fill('summer 1981');
    await page.locator('#h-date [data-date-edtf]', { hasText: '1981-22' }).waitFor();
    const people = page.locator('#f-people');
    await people.fill('Zoë Hartigan');
    await people.press('Enter');
    await fitsTheScreen(page, 'captions-filled');
    await page.locator('[data-save]').tap();
    await page.getByRole('status').filter({ hasText: 'waits for an editor' }).waitFor();
    await snap(page, 'phone-04-suggested');
    const pending = await asToken(archive.editor).get(`/api/items/${items[0]}/suggestions?state=pending`);
    expect(pending.body.suggestions).toHaveLength(1);
    // "summer 1981" in EDTF (Library of Congress, season code 22)
    expect(pending.body.suggestions[0]).toMatchObject({ caption: 'Zoë and Granny at the sideboard', dateEdtf: '1981-22', people: ['Zoë Hartigan'], suggestedBy: 'Cousin Orla' });
    // and nothing changed on the print itself until an editor accepts
    expect((await asToken(archive.editor).get(`/api/items/${items[0]}/metadata`)).body.caption).toBeNull();
  });
});

describe('the Guide', () => {
  it('writes the dye words in colours that pass WCAG AA against the card they are on (4.5:1 for normal text)', async () => {
    await page.goto(`${BASE}/guide`);
    const words = await page.locator('[data-dye-word]').evaluateAll((els) =>
      els.map((el) => {
        const rgb = (s: string) => (s.match(/\d+(\.\d+)?/g) ?? []).slice(0, 4).map(Number);
        let bg: HTMLElement | null = el as HTMLElement;
        let back = [255, 255, 255, 0];
        while (bg && (back = rgb(getComputedStyle(bg).backgroundColor)).length === 4 && back[3] === 0) bg = bg.parentElement;
        return { word: el.textContent, colour: rgb(getComputedStyle(el).color), background: back };
      }),
    );
    expect(words.map((w) => w.word)).toEqual(['cyan', 'magenta', 'yellow']);
    for (const w of words) {
      const ratio = contrastRatio(w.colour.slice(0, 3) as [number, number, number], w.background.slice(0, 3) as [number, number, number]);
      expect(ratio, `${w.word}: rgb(${w.colour}) on rgb(${w.background})`).toBeGreaterThanOrEqual(4.5);
    }
    await fitsTheScreen(page, 'guide');
  });
});
