/**
 * An over-reader's day in Chromium: the blinded queue, claiming the next session, the workspace
 * with curves and the engine's suggestions, overriding a verdict from the keyboard, saving, and
 * signing after confirming their identity at the identity provider. Screenshots go to test-output/e2e.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { Page } from 'playwright-core';
import { DEMO_PASSWORD, DEMO_SITES } from '../../server/seed/demo-study.js';
import { startTidemarkForTest } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR, signInInBrowser } from './browser.js';

const WEB_DIR = path.resolve('dist/web/browser');
let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
let page: Page;
/** Moves the app's clock forward, so that the sign-in becomes too old to sign with. */
let clockShiftMs = 0;

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR }, { clock: () => new Date(Date.now() + clockShiftMs) });
  browser = await launchChromium();
  page = await signInInBrowser(browser.context, tidemark.url, 'reader.one@tidemark.example');
});

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
});

const shot = (name: string) => page.screenshot({ path: path.join(SCREENSHOT_DIR, `reading-${name}.png`), fullPage: true });

describe("an over-reader's read, in Chromium", () => {
  it('shows a blinded queue and opens the next read with its curves', async () => {
    await page.waitForURL(/\/reading/);
    await page.getByTestId('area-home').waitFor();
    await page.locator('button:has-text("Claim next"):not([disabled])').waitFor({ timeout: 30_000 });
    const home = (await page.locator('main').textContent()) ?? '';
    for (const site of DEMO_SITES) expect(home).not.toContain(site.name);
    await shot('queue');
    await page.getByRole('button', { name: /claim next/i }).click();
    await page.waitForURL(/\/reading\/reads\//, { timeout: 30_000 });
    await page.locator('.js-plotly-plot').first().waitFor({ timeout: 30_000 });
    const text = (await page.locator('main').textContent()) ?? '';
    expect(text).toMatch(/Effort 1/);
    for (const site of DEMO_SITES) expect(text).not.toContain(site.name);
    await shot('workspace');
  });

  it('overrides a verdict from the keyboard, saves, and signs after confirming identity', async () => {
    await page.locator('body').click({ position: { x: 5, y: 5 } });
    await page.keyboard.press('3'); // FEV1 verdict of the selected effort: not acceptable
    await page.getByText(/overrid/i).first().waitFor();
    await page.keyboard.press('s');
    await page.getByText(/saved/i).first().waitFor({ timeout: 15_000 });
    clockShiftMs = 6 * 60_000;
    await page.getByRole('button', { name: /^sign$/i }).click();
    await page.getByTestId('confirm-signature').click();
    // The sign-in is now six minutes old: the app asks the reader to confirm who they are.
    await page.getByTestId('reauthenticate-link').click();
    await page.waitForURL(/\/interaction\//, { timeout: 15_000 });
    await shot('reauthenticate');
    // The identity provider stamps the new login with the real time: the app's clock follows it again.
    clockShiftMs = 0;
    await page.fill('#email', 'reader.one@tidemark.example');
    await page.fill('#password', DEMO_PASSWORD);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/reading\/reads\//, { timeout: 30_000 });
    await page.getByTestId('confirm-signature').click();
    await page.locator('main').getByText(/Dr Ilse Vandermeer/).first().waitFor({ timeout: 30_000 });
    await shot('signed');
    const text = (await page.locator('main').textContent()) ?? '';
    expect(text).toMatch(/Dr Ilse Vandermeer/);
    expect(text).toMatch(/UTC/);
  });
});
