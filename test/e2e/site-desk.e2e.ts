/**
 * A site coordinator's upload in Chromium, from sign-in to the checked session with its curves:
 * enrol a subject, register the session, upload a zip of effort CSVs with a progress bar, and
 * read the automated checks. Screenshots go to test-output/e2e.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { strToU8, zipSync } from 'fflate';
import type { Page } from 'playwright-core';
import { effortToCsv, generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { startTidemarkForTest } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR, signInInBrowser } from './browser.js';

const WEB_DIR = path.resolve('dist/web/browser');
let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
let page: Page;
const files = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-e2e-files-'));

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR });
  browser = await launchChromium();
  page = await signInInBrowser(browser.context, tidemark.url, 'coordinator.101@tidemark.example');
});

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
  fs.rmSync(files, { recursive: true, force: true });
});

const shot = (name: string) => page.screenshot({ path: path.join(SCREENSHOT_DIR, `site-desk-${name}.png`), fullPage: true });

async function choose(label: RegExp, option: RegExp): Promise<void> {
  await page.getByRole('combobox', { name: label }).click();
  await page.getByRole('option', { name: option }).first().click();
}

describe("a site coordinator's upload, in Chromium", () => {
  it("lists the site's demo sessions on the site desk", async () => {
    await page.waitForURL(/\/site-desk/);
    await page.getByTestId('area-home').waitFor();
    await page.getByRole('row').nth(1).waitFor();
    expect(await page.getByRole('row').count()).toBeGreaterThan(2);
    await shot('home');
  });

  it('registers a session, uploads its file and shows the automated checks with curves', async () => {
    await page.goto(`${tidemark.url}/site-desk/register`);
    await page.getByRole('button', { name: /enrol a new subject/i }).click();
    await page.getByLabel(/new subject code/i).fill('101-E2E');
    await page.getByRole('button', { name: /^enrol$/i }).click();
    await choose(/subject/i, /101-E2E/);
    await choose(/visit/i, /SCR/);
    await choose(/timepoint/i, /PRE-DOSE/);
    await page.getByRole('radio', { name: /before bronchodilator/i }).check();
    await page.getByLabel(/tested at/i).fill('2026-11-24T09:15');
    await page.getByLabel(/^age/i).fill('63');
    await page.getByLabel(/^height/i).fill('171');
    await page.getByRole('radio', { name: /^male$/i }).check();
    await page.getByLabel(/technician code/i).fill('TECH-21');
    await shot('register-form');
    await page.getByRole('button', { name: /register and go on/i }).click();
    await page.getByRole('heading', { name: /step 2 of 2/i }).waitFor();

    // Four clean efforts as a zip of effort CSVs (the engine's seeded generator: demo data).
    const efforts = generateSession({ efforts: 4, base: { fvcL: 3.1, pefLPerS: 6.2 } }, 4242);
    const zip = zipSync(Object.fromEntries(efforts.map((effort, i) => [`effort-${i + 1}.csv`, strToU8(effortToCsv(effort.recording))])));
    const zipPath = path.join(files, 'session-101-E2E.zip');
    fs.writeFileSync(zipPath, zip);
    await page.setInputFiles('input[type=file]', zipPath);
    await page.getByRole('button', { name: /upload session-101-E2E\.zip/i }).click();

    await page.waitForURL(/\/site-desk\/sessions\//, { timeout: 30_000 });
    const main = page.locator('main');
    await main.getByText(/checked/i).first().waitFor();
    await page.locator('.js-plotly-plot').first().waitFor({ timeout: 30_000 });
    const text = (await main.textContent()) ?? '';
    expect(text).toMatch(/101-E2E/);
    expect(text).toMatch(/effort-4\.csv/);
    expect(text).toMatch(/support|qualified staff/i);
    expect(await page.locator('.js-plotly-plot').count()).toBeGreaterThanOrEqual(2);
    await shot('session-checked');
  });

  it('shows a rejected file with every reason, and keeps it', async () => {
    await page.goto(`${tidemark.url}/site-desk/register`);
    await page.getByRole('button', { name: /enrol a new subject/i }).click();
    await page.getByLabel(/new subject code/i).fill('101-E2F');
    await page.getByRole('button', { name: /^enrol$/i }).click();
    await choose(/subject/i, /101-E2F/);
    await choose(/visit/i, /SCR/);
    await choose(/timepoint/i, /PRE-DOSE/);
    await page.getByRole('radio', { name: /before bronchodilator/i }).check();
    await page.getByLabel(/tested at/i).fill('2026-11-24T10:40');
    await page.getByLabel(/^age/i).fill('58');
    await page.getByLabel(/^height/i).fill('165');
    await page.getByRole('radio', { name: /^female$/i }).check();
    await page.getByLabel(/technician code/i).fill('TECH-21');
    await page.getByRole('button', { name: /register and go on/i }).click();
    await page.getByRole('heading', { name: /step 2 of 2/i }).waitFor();
    const badPath = path.join(files, 'effort-with-typo.csv');
    fs.writeFileSync(badPath, 'time_s,volume_l\n0.00,0.000\n0.01,abc\n');
    await page.setInputFiles('input[type=file]', badPath);
    await page.getByRole('button', { name: /upload effort-with-typo\.csv/i }).click();
    await page.locator('.reasons li').first().waitFor({ timeout: 30_000 });
    expect((await page.locator('.reasons').textContent()) ?? '').toMatch(/row 3/i);
    await shot('file-rejected');
  });
});
