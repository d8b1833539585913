/**
 * Markup typed by a site ends up on screen as text: a technician code and a file name holding
 * HTML are registered and uploaded through the API, then the session page is opened in Chromium.
 * Angular escapes interpolation; this checks that no template binds such a field as HTML. The
 * page's CSP would also block an inline handler, so the check looks at the DOM itself (no element
 * was created from the text) and at CSP violation reports, not only at the payload's side effect.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { strToU8 } from 'fflate';
import type { Page } from 'playwright-core';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import type { Schedule, SessionDetail } from '../../shared/contracts/sessions.js';
import { effortToCsv, generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR, signInInBrowser } from './browser.js';

const WEB_DIR = path.resolve('dist/web/browser');
const TECHNICIAN_CODE = '<img src=x onerror=window.__xss=1>';
const FILE_NAME = '"><svg onload=window.__xss=1>.csv';

let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
let page: Page;
let session: SessionDetail;
const dialogs: string[] = [];

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR, TIDEMARK_SEED_DEMO_SESSIONS: 'false' });
  const { client, csrfToken } = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
  const studyUrl = `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
  const json = { 'content-type': 'application/json', 'x-csrf-token': csrfToken };
  const schedule = (await (await client.fetch(`${studyUrl}/schedule`)).json()) as Schedule;
  await client.fetch(`${studyUrl}/sites/site-101/subjects`, { method: 'POST', headers: json, body: JSON.stringify({ code: '101-XSS' }) });
  const registered = await client.fetch(`${studyUrl}/sites/site-101/sessions`, {
    method: 'POST',
    headers: json,
    body: JSON.stringify({
      subjectCode: '101-XSS',
      visitCode: schedule.visits[0].code,
      timepointCode: schedule.timepoints[0].code,
      bronchodilator: 'pre',
      testedAt: '2026-11-20T09:30:00+01:00',
      demographics: { ageYears: 60, heightCm: 170, weightKg: 78, sex: 'male' },
      technicianCode: TECHNICIAN_CODE,
    }),
  });
  expect(registered.status).toBe(201);
  session = (await registered.json()) as SessionDetail;
  const csv = effortToCsv(generateSession({ efforts: 1, base: { fvcL: 3.2, pefLPerS: 6.5 } }, 31337)[0].recording);
  const form = new FormData();
  form.append('file', new Blob([strToU8(csv)], { type: 'text/csv' }), FILE_NAME);
  const uploaded = await client.fetch(`${studyUrl}/sessions/${session.id}/uploads`, {
    method: 'POST',
    headers: { 'x-csrf-token': csrfToken },
    body: form,
  });
  expect(uploaded.status).toBe(201);

  browser = await launchChromium();
  // Runs in the page before its own scripts (a string: this file is compiled without the DOM library).
  await browser.context.addInitScript({
    content: `
      window.__cspViolations = [];
      document.addEventListener('securitypolicyviolation', (event) => {
        // zod probes once whether eval is allowed (new Function("")) and falls back when CSP says no: not markup.
        if (event.blockedURI !== 'eval') window.__cspViolations.push(event.effectiveDirective + ': ' + event.blockedURI + ' ' + event.sample);
      });`,
  });
  page = await signInInBrowser(browser.context, tidemark.url, 'coordinator.101@tidemark.example');
  page.on('dialog', (dialog) => {
    dialogs.push(dialog.message());
    void dialog.dismiss();
  });
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
});

describe('markup in site-entered text, in Chromium', () => {
  it('shows the technician code and the file name as text on the session page, and runs nothing', async () => {
    await page.goto(`${tidemark.url}/site-desk/sessions/${DEMO_STUDY.id}/${session.id}`);
    const main = page.locator('main');
    await main.getByText(TECHNICIAN_CODE, { exact: true }).first().waitFor({ timeout: 30_000 });
    await main.locator('.file-name').first().waitFor();
    expect(await main.locator('.file-name').first().textContent()).toContain('<svg onload=window.__xss=1>.csv');
    // Give any injected handler the chance to run before looking for its effects.
    await page.waitForTimeout(500);
    const effects = await page.evaluate(`({
      xss: window.__xss,
      injectedImages: document.querySelectorAll('img[src="x"]').length,
      injectedSvgs: document.querySelectorAll('svg[onload]').length,
      cspViolations: window.__cspViolations,
    })`);
    expect(effects).toEqual({ xss: undefined, injectedImages: 0, injectedSvgs: 0, cspViolations: [] });
    expect(dialogs).toEqual([]);
    await page.screenshot({ path: path.join(SCREENSHOT_DIR, 'xss-session-detail.png'), fullPage: true });
  });
});
