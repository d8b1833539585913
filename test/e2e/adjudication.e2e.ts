/**
 * An adjudicator's day in Chromium: two readers disagree on a session (set up through the API with
 * the demo study switched to the dual-all design), then the adjudicator claims it from the
 * adjudication queue, compares Read A and Read B with their differences, sets verdicts and signs
 * the final read. Screenshots go to test-output/e2e.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { Page } from 'playwright-core';
import type { EffortVerdict, ReadWorkspace } from '../../shared/contracts/reading.js';
import { QueueTokens } from '../../server/reading/queue-token.js';
import { DEMO_SITES, DEMO_STUDY, DEMO_USERS } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR, signInInBrowser } from './browser.js';

type Caller = { client: CookieClient; csrfToken: string };

const WEB_DIR = path.resolve('dist/web/browser');
const ADJUDICATOR_NAME = DEMO_USERS.find((user) => user.id === 'user-adjudicator')!.name;
const READER_NAMES = DEMO_USERS.filter((user) => user.id === 'user-reader-1' || user.id === 'user-reader-2').map((user) => user.name);
let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
let page: Page;
let sessionId: string;

const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
const db = () => tidemark.deps.db.$client;

async function call<T>(caller: Caller, method: string, url: string, body?: unknown): Promise<T> {
  const response = await caller.client.fetch(`${studyUrl()}${url}`, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await response.text();
  if (response.status >= 300) throw new Error(`${method} ${url} answered ${response.status}: ${text}`);
  return JSON.parse(text) as T;
}

const otherThan = (verdict: string) => (verdict === 'acceptable' ? 'usable' : 'acceptable');

/** Two readers claim the same checked session; reader two changes effort 1's FVC verdict; both sign. */
async function sendSessionToAdjudication(): Promise<string> {
  const tokens = new QueueTokens(tidemark.dataDir);
  const [readerOne, readerTwo] = await Promise.all(['reader.one', 'reader.two'].map((name) => signIn(tidemark.url, `${name}@tidemark.example`)));
  const { id } = db().prepare(`select id from test_sessions where study_id = ? and status = 'checked' order by id limit 1`).get(DEMO_STUDY.id) as {
    id: string;
  };
  const first = await call<ReadWorkspace>(readerOne, 'POST', '/reading/claims', { queueToken: tokens.tokenFor('user-reader-1', id) });
  let second = await call<ReadWorkspace>(readerTwo, 'POST', '/reading/claims', { queueToken: tokens.tokenFor('user-reader-2', id) });
  const changed: EffortVerdict[] = second.verdicts.map((verdict) =>
    verdict.effortIndex === 0 ? { ...verdict, fvcVerdict: otherThan(verdict.fvcVerdict) as EffortVerdict['fvcVerdict'] } : verdict,
  );
  second = await call<ReadWorkspace>(readerTwo, 'PUT', `/reads/${second.readId}`, { version: second.version, verdicts: changed, feedbackText: second.feedbackText });
  // Both sign-ins happened moments ago, so signing needs no fresh password entry.
  await call(readerOne, 'POST', `/reads/${first.readId}/sign`, { version: first.version, meaning: 'authored' });
  await call(readerTwo, 'POST', `/reads/${second.readId}/sign`, { version: second.version, meaning: 'authored' });
  return id;
}

const sessionStatus = () => (db().prepare(`select status from test_sessions where id = ?`).get(sessionId) as { status: string }).status;

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR });
  db().prepare(`update studies set read_design = 'dual-all' where id = ?`).run(DEMO_STUDY.id);
  sessionId = await sendSessionToAdjudication();
  browser = await launchChromium();
  page = await signInInBrowser(browser.context, tidemark.url, 'adjudicator@tidemark.example');
});

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
});

const shot = (name: string) => page.screenshot({ path: path.join(SCREENSHOT_DIR, `adjudication-${name}.png`), fullPage: true });

describe("an adjudicator's final read, in Chromium", () => {
  it('lists the disagreement in the adjudication queue', async () => {
    expect(sessionStatus()).toBe('adjudication');
    await page.goto(`${tidemark.url}/adjudication`);
    await page.getByTestId('area-home').waitFor();
    await page.getByRole('heading', { name: /reads to adjudicate/i }).waitFor();
    await page.locator('button:has-text("Claim next"):not([disabled])').waitFor({ timeout: 30_000 });
    await shot('queue');
  });

  it('claims it and shows Read A and Read B side by side with where they differ, naming no reader or site', async () => {
    await page.getByRole('button', { name: /claim next/i }).click();
    await page.waitForURL(/\/adjudication\/adjudications\//, { timeout: 30_000 });
    await page.getByRole('heading', { name: /the two reads to adjudicate/i }).waitFor({ timeout: 30_000 });
    await page.getByRole('article', { name: 'Read A' }).waitFor();
    await page.getByRole('article', { name: 'Read B' }).waitFor();
    const differences = (await page.getByTestId('differences').textContent()) ?? '';
    expect(differences).toMatch(/Effort 1 FVC: Read A .+, Read B .+/);
    expect(await page.locator('.flag', { hasText: 'differs' }).count()).toBeGreaterThanOrEqual(2);
    const text = (await page.locator('main').textContent()) ?? '';
    for (const name of READER_NAMES) expect(text).not.toContain(name);
    for (const site of DEMO_SITES) expect(text).not.toContain(site.name);
    await shot('comparison');
  });

  it('sets verdicts, signs, and shows the signature as the final read', async () => {
    await page.locator('body').click({ position: { x: 5, y: 5 } });
    await page.keyboard.press('Shift+Digit3'); // FVC verdict of the selected effort: not acceptable
    await page.getByText(/from the engine's suggestion/).first().waitFor();
    await page.keyboard.press('s');
    await page.getByText(/everything is saved/i).first().waitFor({ timeout: 15_000 });
    await shot('verdicts-saved');
    await page.getByTestId('sign-read').click();
    await page.getByTestId('confirm-signature').click();
    await page.locator('main').getByText(ADJUDICATOR_NAME).first().waitFor({ timeout: 30_000 });
    await shot('signed');
    expect((await page.getByTestId('signed-by').textContent())?.trim()).toBe('Dr Amara Lindqvist');
    expect((await page.locator('main').textContent()) ?? '').toMatch(/UTC/);
    expect(sessionStatus()).toBe('final');
  });
});
