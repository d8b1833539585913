import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { DEMO_PASSWORD } from '../../server/seed/demo-study.js';

export const CHROMIUM_PATH = process.env['TIDEMARK_CHROMIUM'] ?? '/usr/bin/chromium';
export const SCREENSHOT_DIR = path.resolve('test-output/e2e');

/** Launches Debian's Chromium headless; fails with the install command when it is missing (never skips). */
export async function launchChromium(): Promise<{ context: BrowserContext; close: () => Promise<void> }> {
  if (!fs.existsSync(CHROMIUM_PATH)) {
    throw new Error(
      `Chromium was not found at ${CHROMIUM_PATH}. Install it with "apt-get install -y chromium" ` +
        '(or set TIDEMARK_CHROMIUM to its path); the browser suite cannot run without it.',
    );
  }
  const profile = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-chromium-'));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath: CHROMIUM_PATH,
    headless: true,
    viewport: { width: 1366, height: 860 },
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-quic',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
    ],
  });
  fs.mkdirSync(SCREENSHOT_DIR, { recursive: true });
  return {
    context,
    close: async () => {
      await context.close();
      fs.rmSync(profile, { recursive: true, force: true });
    },
  };
}

/** Signs in through the app's sign-in page and the identity provider's form, as a person would. */
export async function signInInBrowser(context: BrowserContext, appUrl: string, email: string): Promise<Page> {
  await context.clearCookies();
  const page = await context.newPage();
  await page.goto(`${appUrl}/`);
  await page.waitForURL(/\/sign-in/);
  await page.getByRole('button', { name: /sign in/i }).or(page.getByRole('link', { name: /sign in/i })).first().click();
  await page.waitForURL(/\/interaction\//);
  await page.fill('#email', email);
  await page.fill('#password', DEMO_PASSWORD);
  await page.getByRole('button', { name: 'Sign in' }).click();
  await page.waitForURL((url) => url.origin === new URL(appUrl).origin && !url.pathname.startsWith('/sign-in'));
  return page;
}
