/**
 * Debian's Chromium driven by playwright-core, for the browser tests. Screenshots are kept in
 * tests/artifacts/ (git-ignored) as evidence of what the user saw.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { BASE } from './http.ts';

export const ARTIFACTS = path.resolve('tests/artifacts');

/** A phone held upright: 390 CSS pixels wide, touch, a dense screen, a phone's user agent. */
export const PHONE = { viewport: { width: 390, height: 844 }, deviceScaleFactor: 3, isMobile: true, hasTouch: true } as const;

/** Chromium with a desktop window, or with `PHONE` (or another device) when given. */
export async function launchBrowser(device: { viewport: { width: number; height: number }; deviceScaleFactor?: number; isMobile?: boolean; hasTouch?: boolean } = { viewport: { width: 1280, height: 860 } }): Promise<BrowserContext> {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'drawerlight-chromium-'));
  const context = await chromium.launchPersistentContext(dir, {
    executablePath: '/usr/bin/chromium',
    headless: true,
    ...device,
    args: ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
  // The profile folder is the test's own: removed once Chromium has closed (it may still be
  // finishing its writes, hence the retries); never a reason to fail a test.
  const close = context.close.bind(context);
  context.close = async (...args: Parameters<BrowserContext['close']>) => {
    await close(...args);
    await fs.promises.rm(dir, { recursive: true, force: true, maxRetries: 10, retryDelay: 200 }).catch(() => undefined);
  };
  return context;
}

/** Saves a full-page screenshot under tests/artifacts/<name>.png. */
export async function snap(page: Page, name: string): Promise<string> {
  fs.mkdirSync(ARTIFACTS, { recursive: true });
  const file = path.join(ARTIFACTS, `${name}.png`);
  await page.screenshot({ path: file, fullPage: true });
  return file;
}

/** Signs in through the sign-in page as a person would. */
export async function signInPage(page: Page, email: string, password: string): Promise<void> {
  await page.goto(`${BASE}/signin`);
  await page.getByLabel('E-mail', { exact: true }).fill(email);
  await page.getByLabel('Password').fill(password);
  await page.getByRole('button', { name: 'Sign in', exact: true }).click();
  await page.waitForLoadState('networkidle');
}
