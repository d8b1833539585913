/**
 * A site coordinator answers a query in Chromium: an over-reader claims a site-101 session and asks
 * for a repeat through the API, then the coordinator of site 101 opens the session on the site desk,
 * reads the query card, writes an answer and sends it. Screenshots go to test-output/e2e.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { Page } from 'playwright-core';
import type { Query, ReadWorkspace } from '../../shared/contracts/reading.js';
import { QueueTokens } from '../../server/reading/queue-token.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR, signInInBrowser } from './browser.js';

const WEB_DIR = path.resolve('dist/web/browser');
const QUESTION = 'Effort 2 looks cut short: was the subject coughing?';
const ANSWER = 'The subject coughed during effort 2; we repeat the test at the next visit.';
let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
let page: Page;
let sessionId: string;
let query: Query;

const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;

/** Reader one claims a checked session of site 101 and asks the site for a repeat; returns the session and the query. */
async function openQueryOnSite101Session(): Promise<{ sessionId: string; query: Query }> {
  const reader = await signIn(tidemark.url, 'reader.one@tidemark.example');
  const post = async <T>(url: string, body: unknown): Promise<T> => {
    const response = await reader.client.fetch(`${studyUrl()}${url}`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'x-csrf-token': reader.csrfToken },
      body: JSON.stringify(body),
    });
    const text = await response.text();
    if (response.status !== 201) throw new Error(`POST ${url} answered ${response.status}: ${text}`);
    return JSON.parse(text) as T;
  };
  const { id } = tidemark.deps.db.$client
    .prepare(`select id from test_sessions where study_id = ? and site_id = 'site-101' and status = 'checked' order by id limit 1`)
    .get(DEMO_STUDY.id) as { id: string };
  // The reader's queue shows this very token for the session; the reader never learns the site.
  const workspace = await post<ReadWorkspace>('/reading/claims', { queueToken: new QueueTokens(tidemark.dataDir).tokenFor('user-reader-1', id) });
  const { siteId } = tidemark.deps.db.$client
    .prepare(`select s.site_id as siteId from reads r join test_sessions s on s.id = r.session_id where r.id = ?`)
    .get(workspace.readId) as { siteId: string };
  expect(siteId).toBe('site-101');
  const opened = await post<Query>(`/reads/${workspace.readId}/queries`, { question: QUESTION, requestRepeat: true });
  return { sessionId: id, query: opened };
}

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR });
  ({ sessionId, query } = await openQueryOnSite101Session());
  browser = await launchChromium();
  page = await signInInBrowser(browser.context, tidemark.url, 'coordinator.101@tidemark.example');
});

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
});

const shot = (name: string) => page.screenshot({ path: path.join(SCREENSHOT_DIR, `site-query-${name}.png`), fullPage: true });
const queryStatus = () =>
  (tidemark.deps.db.$client.prepare(`select status from queries where id = ?`).get(query.id) as { status: string }).status;

describe("a site coordinator's answer to a query, in Chromium", () => {
  it('shows the open query with the repeat request on the session page', async () => {
    await page.waitForURL(/\/site-desk/);
    await page.getByTestId('area-home').waitFor();
    await shot('home');
    await page.goto(`${tidemark.url}/site-desk/sessions/${DEMO_STUDY.id}/${sessionId}`);
    const card = page.locator('li.query').filter({ hasText: QUESTION });
    await card.waitFor({ timeout: 30_000 });
    const text = (await card.textContent()) ?? '';
    expect(text).toMatch(/Waiting for your answer/);
    expect(text).toMatch(/Asked by the over-reader/);
    expect(text).toMatch(/Repeat the test requested/);
    expect(text).not.toMatch(/Vandermeer/);
    await shot('query-open');
  });

  it('sends the answer and shows the query as answered', async () => {
    const card = page.locator('li.query').filter({ hasText: QUESTION });
    await card.getByLabel(/your answer/i).fill(ANSWER);
    await card.getByRole('button', { name: /send answer/i }).click();
    await card.getByText(/Answered; with the study team/).waitFor({ timeout: 15_000 });
    const text = (await card.textContent()) ?? '';
    expect(text).toContain(ANSWER);
    expect(text).toMatch(/Your site/);
    expect(queryStatus()).toBe('answered');
    await shot('query-answered');
  });
});
