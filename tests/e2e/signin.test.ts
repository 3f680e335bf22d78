import { createHash } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { BrowserContext } from 'playwright-core';
import { closeDb } from '../../db/index.ts';
import { DEMO_PASSWORD, DEMO_USERS } from '../../db/seeders/demo.ts';
import { launchBrowser, signInPage, snap } from '../support/browser.ts';
import { BASE, signedIn } from '../support/http.ts';
import { waitForMail } from '../support/outbox.ts';

const owner = DEMO_USERS.find((u) => u.role === 'owner')!;
let browser: BrowserContext;
beforeAll(async () => {
  browser = await launchBrowser();
});
afterAll(async () => {
  await browser?.close();
  await closeDb();
});

describe('signing in and the shell', () => {
  it('signs the demo owner in and shows the shell with every section', async () => {
    const page = await browser.newPage();
    const refused: string[] = [];
    page.on('console', (m) => {
      if (/Content Security Policy/i.test(m.text())) refused.push(m.text());
    });
    await signInPage(page, owner.email, DEMO_PASSWORD);
    expect(new URL(page.url()).pathname).toBe('/batches');
    const nav = page.getByRole('navigation', { name: 'Main' });
    for (const label of ['Batches', 'Rescan list', 'Export', 'Team', 'Settings']) await expect(nav.getByRole('link', { name: label }).isVisible()).resolves.toBe(true);
    await expect(page.getByLabel('Archive').inputValue()).resolves.toBe('hartigan');
    await snap(page, 'shell-owner');
    // The team page's island hydrates under the policy: its inline loader is allowed by hash.
    await page.goto(`${BASE}/team`);
    // Enabled only once hydrated; a refused loader would leave it disabled and this wait would fail.
    await page.locator('button:has-text("Send invitation"):enabled').waitFor({ timeout: 20_000 });
    expect(refused).toEqual([]);
    await page.getByRole('button', { name: 'Sign out' }).click();
    await page.waitForURL(/\/signin/);
    await page.goto(`${BASE}/team`);
    expect(new URL(page.url()).pathname).toBe('/signin');
    await page.close();
  });

  it('allows only the scripts of the build: the same policy on every response, and an inline script injected into a page is refused', async () => {
    const owner1 = await signedIn(owner.email, DEMO_PASSWORD);
    const policies = new Set<string>();
    for (const path of ['/signin', '/team', '/batches', '/api/me']) policies.add((await owner1.get(path, { accept: 'text/html' })).headers.get('content-security-policy') ?? '');
    // Never worked out from a page's content, so nothing a page happens to contain can be allowed by it.
    expect([...policies]).toHaveLength(1);
    const policy = [...policies][0];
    const scriptSrc = policy.split(';').find((d) => d.trim().startsWith('script-src'))!;
    expect(scriptSrc).not.toContain('unsafe-inline');
    // Every inline script our pages do have (the island loader) is in it by its hash.
    const team = await owner1.get('/team', { accept: 'text/html' });
    const inline = [...team.text.matchAll(/<script\b(?![^>]*\bsrc=)[^>]*>([\s\S]*?)<\/script>/gi)].map((m) => m[1]);
    expect(inline.length).toBeGreaterThan(0);
    for (const script of inline) expect(scriptSrc).toContain(`'sha256-${createHash('sha256').update(script, 'utf8').digest('base64')}'`);

    // A script that reached a page (as a caption rendered raw would) is refused by Chromium, while
    // the page's own islands still hydrate.
    const page = await browser.newPage();
    const refused: string[] = [];
    page.on('console', (m) => {
      if (/Content Security Policy/i.test(m.text())) refused.push(m.text());
    });
    await signInPage(page, owner.email, DEMO_PASSWORD);
    await page.route(`${BASE}/team`, async (route) => {
      const res = await route.fetch();
      const html = (await res.text()).replace('<main', '<p>Caption: <script>window.__injected = true</script></p><main');
      await route.fulfill({ response: res, body: html });
    });
    await page.goto(`${BASE}/team`);
    await page.locator('button:has-text("Send invitation"):enabled').waitFor({ timeout: 20_000 });
    await expect(page.evaluate(() => (window as { __injected?: boolean }).__injected)).resolves.toBeUndefined();
    expect(refused.some((m) => /inline script/i.test(m))).toBe(true);
    await page.unroute(`${BASE}/team`);
    await page.getByRole('button', { name: 'Sign out' }).click();
    await page.waitForURL(/\/signin/);
    await page.close();
  });

  it('refuses a wrong password with a clear message', async () => {
    const page = await browser.newPage();
    await signInPage(page, owner.email, 'not the password');
    const alert = page.getByRole('alert');
    await expect(alert.textContent()).resolves.toContain('do not match');
    expect(new URL(page.url()).pathname).toBe('/signin');
    await snap(page, 'signin-wrong-password');
    await page.close();
  });

  it('invites a new member whose link from the Outbox signs them in as a viewer without owner actions', async () => {
    const page = await browser.newPage();
    await signInPage(page, owner.email, DEMO_PASSWORD);
    await page.goto(`${BASE}/team`);
    const email = `cousin.${Date.now()}@hartigan.example`;
    await page.getByLabel('E-mail').fill(email);
    await page.getByLabel('Role', { exact: true }).selectOption('viewer');
    await page.getByRole('button', { name: 'Send invitation' }).click();
    await page.getByText(`Invitation sent to ${email}.`).waitFor();
    await waitForMail(email, /invited/);
    await page.getByRole('button', { name: 'Sign out' }).click();
    await page.waitForURL(/\/signin/);

    await page.goto(`${BASE}/outbox`);
    const mail = page.locator(`[data-mail-to="${email}"]`).first();
    await mail.getByRole('link', { name: /\/invite\// }).click();
    await page.getByLabel('Your name').fill('Cousin Orla');
    await page.getByLabel(/Choose a password/).fill('a long enough password');
    await page.getByRole('button', { name: /Join the/ }).click();
    await page.waitForURL(/\/batches/).catch(async (err) => {
      await snap(page, 'invite-accept-stuck');
      throw new Error(`${err.message}\nstill at ${page.url()}; the page says: ${(await page.locator('main').innerText()).slice(0, 400)}`);
    });
    await expect(page.locator('[data-user-email]').textContent()).resolves.toContain('Cousin Orla');
    await page.goto(`${BASE}/team`);
    await expect(page.locator('[data-owner-only]').isVisible()).resolves.toBe(true);
    await expect(page.getByRole('button', { name: 'Send invitation' }).count()).resolves.toBe(0);
    await snap(page, 'viewer-team-page');
    await page.close();
  });
});
