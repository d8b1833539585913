import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { BrowserContext, Page } from 'playwright-core';
import { DEMO_USERS, type DemoUser } from '../../server/seed/demo-study.js';
import { startTidemarkForTest } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR, signInInBrowser } from './browser.js';

const WEB_DIR = path.resolve('dist/web/browser');

/** The area each role lands in, and the words its home page must show. */
const HOME_OF: Record<string, { path: string; heading: RegExp }> = {
  'study-admin': { path: '/setup', heading: /study setup/i },
  'site-coordinator': { path: '/site-desk', heading: /site desk/i },
  'over-reader': { path: '/reading', heading: /reading room/i },
  'data-manager': { path: '/data-office', heading: /data office/i },
  monitor: { path: '/oversight', heading: /oversight/i },
};

let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
const outsideRequests: string[] = [];

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR });
  browser = await launchChromium();
  browser.context.on('request', (request) => {
    const host = new URL(request.url()).hostname;
    if (!['127.0.0.1', 'localhost'].includes(host) && !request.url().startsWith('data:')) outsideRequests.push(request.url());
  });
});

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
});

function signInThroughBrowser(context: BrowserContext, user: DemoUser): Promise<Page> {
  return signInInBrowser(context, tidemark.url, user.email);
}

describe('signing in through the identity provider, in Chromium', () => {
  it.each(DEMO_USERS.map((user) => [user.email, user] as const))('%s lands on their own home page', async (_email, user) => {
    const page = await signInThroughBrowser(browser.context, user);
    const home = HOME_OF[user.roles[0].role];
    await page.waitForURL((url) => url.pathname.startsWith(home.path));
    const heading = page.getByTestId('area-home');
    await heading.waitFor();
    expect(await heading.textContent()).toMatch(home.heading);
    expect(await page.getByText(user.name).count()).toBeGreaterThan(0);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, `home-${user.id}.png`), fullPage: true });
    await page.close();
  });

  it('shows an honest 403 page when a reader opens the data office', async () => {
    const reader = DEMO_USERS.find((user) => user.id === 'user-reader-1')!;
    const page = await signInThroughBrowser(browser.context, reader);
    await page.goto(`${tidemark.url}/data-office`);
    await page.waitForURL(/\/forbidden/);
    const text = (await page.textContent('main')) ?? '';
    expect(text).toMatch(/over-reader/i);
    expect(text).toMatch(/study admin/i);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, 'forbidden-reader.png'), fullPage: true });
    await page.close();
  });

  it('made no request to any host outside this machine', () => {
    expect(outsideRequests).toEqual([]);
  });
});
