/**
 * The monitor's journey in Chromium: sign in, open the study's audit trail, filter it to
 * sessions, verify the chain, and open the site and reader dashboards with their charts and the
 * xlsx export. The demo study's sessions come from the seed; two over-reads of one session are
 * written into the test's own database (the reading room is not part of this journey) so that
 * the reader dashboard has something to show. Screenshots go to test-output/e2e.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { Page } from 'playwright-core';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { startTidemarkForTest } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR, signInInBrowser } from './browser.js';

// TIDEMARK_E2E_WEB_DIR runs the journey against a client built elsewhere (`ng build --output-path ...`).
const WEB_DIR = path.resolve(process.env['TIDEMARK_E2E_WEB_DIR'] ?? 'dist/web/browser');
let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
let page: Page;

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR });
  writeTwoReadsOfOneSession();
  browser = await launchChromium();
  page = await signInInBrowser(browser.context, tidemark.url, 'monitor@tidemark.example');
  // The shell scrolls inside its content pane, so a tall window shows whole tables and charts in the screenshots.
  await page.setViewportSize({ width: 1366, height: 1500 });
});

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
});

/** Reads a value until it satisfies `check` (the page updates asynchronously); returns the last value read. */
async function settled<T>(read: () => Promise<T>, check: (value: T) => boolean, timeoutMs = 15_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  let value = await read();
  while (!check(value) && Date.now() < deadline) {
    await new Promise((resolve) => setTimeout(resolve, 200));
    value = await read();
  }
  return value;
}

const shot = (name: string) => page.screenshot({ path: path.join(SCREENSHOT_DIR, `oversight-${name}.png`), fullPage: true });

/** A first and a second read of one checked demo session, differing on one FVC verdict. */
function writeTwoReadsOfOneSession(): void {
  const db = tidemark.deps.db.$client;
  const session = db
    .prepare(`select id, current_upload_id as uploadId from test_sessions where study_id = ? and status = 'checked' order by id limit 1`)
    .get(DEMO_STUDY.id) as { id: string; uploadId: string };
  const efforts = db
    .prepare(`select id, effort_index as i, suggested_fev1_verdict as f, suggested_fvc_verdict as v from efforts where upload_id = ? order by effort_index`)
    .all(session.uploadId) as { id: string; i: number; f: string; v: string }[];
  const reads = [
    { id: 'e2e-read-1', readerId: 'user-reader-1', kind: 'first', minutes: 14 },
    { id: 'e2e-read-2', readerId: 'user-reader-2', kind: 'second', minutes: 21 },
  ];
  for (const [n, read] of reads.entries()) {
    const claimedAt = new Date(Date.now() - 3_600_000).toISOString();
    db.prepare(
      `insert into reads (id, study_id, session_id, upload_id, reader_id, kind, blind_code, status, version, claimed_at, due_at, updated_at, signed_at)
       values (?, ?, ?, ?, ?, ?, ?, 'signed', 1, ?, ?, ?, ?)`,
    ).run(read.id, DEMO_STUDY.id, session.id, session.uploadId, read.readerId, read.kind, `E2E-${n}`, claimedAt, claimedAt, claimedAt, new Date(Date.parse(claimedAt) + read.minutes * 60_000).toISOString());
    for (const effort of efforts) {
      const fvc = n === 1 && effort.i === 0 ? (effort.v === 'acceptable' ? 'usable' : 'acceptable') : effort.v;
      db.prepare(
        `insert into read_verdicts (read_id, effort_id, effort_index, fev1_verdict, fvc_verdict, suggested_fev1_verdict, suggested_fvc_verdict)
         values (?, ?, ?, ?, ?, ?, ?)`,
      ).run(read.id, effort.id, effort.i, effort.f, fvc, effort.f, effort.v);
    }
  }
}

describe("a monitor's oversight, in Chromium", () => {
  it('lands in Audit & oversight with a way into the study', async () => {
    await page.waitForURL(/\/oversight/);
    await page.getByTestId('area-home').waitFor();
    await shot('home');
    await page.getByRole('link', { name: /audit trail/i }).first().click();
    await page.waitForURL(/\/oversight\/studies\/[^/]+\/audit-trail/);
  });

  it('shows the audit trail and filters it to sessions', async () => {
    await page.getByTestId('audit-row').first().waitFor();
    expect(await page.getByTestId('audit-row').count()).toBeGreaterThan(5);
    await shot('audit-trail');

    await page.getByRole('combobox', { name: /entity/i }).click();
    await page.getByRole('option', { name: /^session$/ }).click();
    const entities = async () => [...new Set((await page.locator('[data-testid=audit-row] .entity').allTextContents()).map((t) => t.trim()))];
    expect(await settled(entities, (shown) => shown.length === 1)).toEqual(['session']);
    // Old and new values side by side, the changed fields highlighted.
    expect(await page.locator('[data-testid=audit-row] app-audit-value .line.changed').count()).toBeGreaterThan(0);
    await shot('audit-trail-sessions');
  });

  it('verifies the chain on demand and shows the result', async () => {
    await page.getByRole('button', { name: /verify chain now/i }).click();
    const result = async () => (await page.getByTestId('chain-result').textContent()) ?? '';
    expect(await settled(result, (text) => /Chain (intact|broken)/.test(text), 60_000)).toMatch(/Chain intact: [\d,]+ rows verified/);
    await shot('chain-verified');
  });

  it('opens the site performance dashboard with its charts and export', async () => {
    await page.getByRole('link', { name: /site performance/i }).click();
    await page.waitForURL(/\/sites$/);
    await page.getByTestId('site-row').first().waitFor();
    expect(await page.getByTestId('site-row').count()).toBe(4);
    expect(await settled(() => page.locator('.js-plotly-plot').count(), (count) => count === 3, 30_000)).toBe(3);
    await shot('site-performance');

    const [download] = await Promise.all([page.waitForEvent('download'), page.getByTestId('export-xlsx').click()]);
    expect(download.suggestedFilename()).toMatch(/^performance-HLX-201-\d{4}-\d{2}-\d{2}\.xlsx$/);
    const saved = path.join(SCREENSHOT_DIR, 'oversight-performance-export.xlsx');
    await download.saveAs(saved);
    // An xlsx is a zip: it starts with "PK".
    expect(fs.readFileSync(saved).subarray(0, 2).toString()).toBe('PK');
  });

  it('opens the reader performance dashboard with agreement and its chart', async () => {
    await page.getByRole('link', { name: /reader performance/i }).click();
    await page.waitForURL(/\/readers$/);
    await page.getByTestId('reader-row').first().waitFor();
    expect(await page.getByTestId('reader-row').count()).toBe(2);
    expect((await page.locator('main').textContent()) ?? '').toMatch(/Overall agreement on dual reads \(1 session\): [\d.]+ %, kappa/);
    await page.locator('.js-plotly-plot').first().waitFor({ timeout: 30_000 });
    await shot('reader-performance');
  });
});
