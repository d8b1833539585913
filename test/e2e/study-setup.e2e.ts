/**
 * The study admin's setup journey in Chromium: sign in, create a study, set its settings and
 * visit schedule (an overlapping window is refused on the way), add a site, invite a person, and
 * give a reason once the study holds data. Screenshots go to test-output/e2e. All data fictional.
 */
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { Page } from 'playwright-core';
import { DEMO_PASSWORD } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR } from './browser.js';

const WEB_DIR = path.resolve('dist/web/browser');

let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
let page: Page;
/** The editor URL of the study created in the browser. */
let studyUrl = '';

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR });
  browser = await launchChromium();
  page = await browser.context.newPage();
  // The shell scrolls inside its content pane, so a tall window shows whole forms in the screenshots.
  await page.setViewportSize({ width: 1366, height: 1300 });
});

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
});

function screenshot(name: string) {
  return page.screenshot({ path: path.join(SCREENSHOT_DIR, `setup-${name}.png`), fullPage: true });
}

async function openTab(name: string) {
  await page.getByRole('tab', { name }).click();
  await page.waitForURL((url) => url.pathname.endsWith(`/${name.toLowerCase()}`));
}

/** Fills a visit row of the schedule form (1-based). */
async function fillVisit(row: number, visit: { code: string; name: string; day: number; before: number; after: number }) {
  await page.getByLabel(`Visit ${row} code`, { exact: true }).fill(visit.code);
  await page.getByLabel(`Visit ${row} name`, { exact: true }).fill(visit.name);
  await page.getByLabel(`Visit ${row} planned day`, { exact: true }).fill(String(visit.day));
  await page.getByLabel(`Visit ${row} window days before`, { exact: true }).fill(String(visit.before));
  await page.getByLabel(`Visit ${row} window days after`, { exact: true }).fill(String(visit.after));
}

describe('a study admin sets up a new study in Chromium', () => {
  it('signs in and sees the studies they administer', async () => {
    await page.goto(`${tidemark.url}/setup`);
    await page.waitForURL(/\/sign-in/);
    await page.getByRole('button', { name: /sign in/i }).or(page.getByRole('link', { name: /sign in/i })).first().click();
    await page.waitForURL(/\/interaction\//);
    await page.fill('#email', 'admin@tidemark.example');
    await page.fill('#password', DEMO_PASSWORD);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL((url) => url.pathname.startsWith('/setup'));
    await page.getByTestId('area-home').waitFor();
    await expect(page.getByRole('link', { name: /HLX-201/ }).count()).resolves.toBe(1);
  });

  it('creates a study through the "New study" dialog', async () => {
    await page.getByRole('button', { name: 'New study' }).click();
    const dialog = page.getByRole('dialog');
    await dialog.getByLabel(/Study code/).fill('HLX-201');
    await dialog.getByLabel(/Title/).fill('Fictional phase II trial of inhaled merovant in moderate asthma');
    await dialog.getByLabel(/Sponsor/).fill('Brightwater Respiratory (fictional)');
    await dialog.getByLabel(/Indication/).fill('Moderate persistent asthma');
    await dialog.getByRole('button', { name: 'Create study' }).click();
    // The code is taken by the demo study: the server's words appear in the dialog.
    await expect(dialog.getByRole('alert').textContent()).resolves.toMatch(/study code HLX-201 is already used/);
    await screenshot('new-study-code-taken');

    await dialog.getByLabel(/Study code/).fill('MRV-210');
    await dialog.getByRole('button', { name: 'Create study' }).click();
    await page.waitForURL(/\/setup\/studies\/[^/]+\/study$/);
    studyUrl = page.url().replace(/\/study$/, '');
    await expect(page.getByTestId('study-editor-title').textContent()).resolves.toContain('MRV-210');
  });

  it('sets the read design and turnaround on the Study tab', async () => {
    await page.getByRole('radio', { name: /Dual read, a sample/ }).check();
    await page.getByLabel(/Fraction read twice/).fill('0.25');
    await page.getByLabel(/Turnaround/).fill('72');
    await page.getByRole('checkbox', { name: /Over-readers see the visit/ }).uncheck();
    await page.getByRole('button', { name: 'Save study settings' }).click();
    await page.getByText('Study settings saved.').waitFor();
    await screenshot('study-settings');
  });

  it('sets the visit schedule, after the server refuses an overlapping window', async () => {
    await openTab('Schedule');
    await fillVisit(1, { code: 'SCR', name: 'Screening', day: -14, before: 7, after: 7 });
    await page.getByRole('button', { name: 'Add a visit' }).click();
    await fillVisit(2, { code: 'D1', name: 'Randomisation (day 1)', day: 1, before: 0, after: 0 });
    await page.getByRole('button', { name: 'Add a visit' }).click();
    await fillVisit(3, { code: 'W4', name: 'Week 4', day: 5, before: 7, after: 3 });
    await page.getByLabel('Timepoint 1 code', { exact: true }).fill('PRE');
    await page.getByLabel('Timepoint 1 name', { exact: true }).fill('Pre-dose (trough)');
    await page.getByRole('button', { name: 'Add a timepoint' }).click();
    await page.getByLabel('Timepoint 2 code', { exact: true }).fill('2H');
    await page.getByLabel('Timepoint 2 name', { exact: true }).fill('2 h post-dose');
    await page.getByRole('button', { name: 'Save schedule' }).click();
    const alert = page.getByRole('alert');
    await alert.waitFor();
    expect(await alert.textContent()).toMatch(/Visits D1 \(Randomisation \(day 1\), day 1\) and W4 \(Week 4, days -2 to 8\) overlap on day 1/);
    await screenshot('schedule-overlap-refused');

    await page.getByLabel('Visit 3 planned day', { exact: true }).fill('29');
    await page.getByLabel('Visit 3 window days before', { exact: true }).fill('3');
    await page.getByRole('button', { name: 'Save schedule' }).click();
    await page.getByText('Schedule saved.').waitFor();
    await screenshot('schedule');
  });

  it('adds a site', async () => {
    await openTab('Sites');
    await page.getByLabel(/Site number/).fill('701');
    await page.getByLabel(/Site name/).fill('Tern Island Lung Clinic');
    await page.getByLabel(/Country code/).fill('no');
    await page.getByLabel(/Time zone/).fill('Europe/Os');
    await page.getByRole('option', { name: 'Europe/Oslo' }).click();
    await page.getByRole('button', { name: 'Add site' }).click();
    await page.getByText('Site 701 added.').waitFor();
    await page.getByRole('cell', { name: 'Tern Island Lung Clinic' }).waitFor();
    await expect(page.getByRole('cell', { name: 'Norway (NO)' }).count()).resolves.toBe(1);
    // The emptied form waits for the next site without complaining about empty fields.
    await expect(page.locator('mat-error').count()).resolves.toBe(0);
    await screenshot('sites');
  });

  it('invites a site coordinator for the new site', async () => {
    await openTab('People');
    await page.getByLabel(/E-mail/).fill('kittiwake.ross@tidemark.example');
    await page.getByLabel(/^Name/).fill('Kittiwake Ross');
    await page.getByRole('combobox', { name: /Role/ }).click();
    await page.getByRole('option', { name: 'Site coordinator' }).click();
    await page.getByRole('combobox', { name: /Sites/ }).click();
    await page.getByRole('option', { name: /701/ }).click();
    await page.keyboard.press('Escape');
    await page.getByRole('button', { name: 'Invite' }).click();
    await page.getByText(/invitation was e-mailed to kittiwake.ross@tidemark.example/).waitFor();
    const row = page.getByRole('row', { name: /Kittiwake Ross/ });
    await expect(row.textContent()).resolves.toMatch(/Site coordinator at site 701/);
    await expect(page.locator('mat-error').count()).resolves.toBe(0);
    await screenshot('people');
    await tidemark.services.messages.settle();
    expect(tidemark.fakes.mail!.messages.some((raw) => raw.includes('kittiwake.ross@tidemark.example') && raw.includes('MRV-210'))).toBe(true);
  });

  it('asks for a reason once the study holds a session', async () => {
    // A session arrives through the API: a demo coordinator joins the site and registers one.
    const studyId = new URL(studyUrl).pathname.split('/')[3];
    const admin = await signIn(tidemark.url, 'admin@tidemark.example');
    const send = (who: typeof admin, method: string, url: string, body: unknown) =>
      who.client.fetch(`${tidemark.url}${url}`, {
        method,
        headers: { 'content-type': 'application/json', 'x-csrf-token': who.csrfToken },
        body: JSON.stringify(body),
      });
    const sites = (await (await admin.client.fetch(`${tidemark.url}/api/studies/${studyId}/sites`)).json()) as { id: string }[];
    const siteId = sites[0].id;
    const joined = await send(admin, 'POST', `/api/studies/${studyId}/people`, {
      email: 'coordinator.101@tidemark.example',
      name: 'x',
      role: 'site-coordinator',
      siteIds: [siteId],
    });
    expect(joined.status).toBe(201);
    const coordinator = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
    expect((await send(coordinator, 'POST', `/api/studies/${studyId}/sites/${siteId}/subjects`, { code: '701-001' })).status).toBe(201);
    const registered = await send(coordinator, 'POST', `/api/studies/${studyId}/sites/${siteId}/sessions`, {
      subjectCode: '701-001',
      visitCode: 'SCR',
      timepointCode: 'PRE',
      bronchodilator: 'pre',
      testedAt: '2026-02-03T10:15:00+01:00',
      demographics: { ageYears: 38, heightCm: 168, weightKg: 64, sex: 'female' },
      technicianCode: 'TECH-70',
    });
    expect(registered.status).toBe(201);

    await page.goto(`${studyUrl}/study`);
    await page.getByText(/One session is registered/).waitFor();
    await page.getByLabel(/Turnaround/).fill('48');
    await page.getByRole('button', { name: 'Save study settings' }).click();
    const dialog = page.getByRole('dialog');
    await dialog.getByText(/Study MRV-210 already has a session: give a reason/).waitFor();
    await dialog.getByTestId('reason-input').fill('Protocol amendment 1: turnaround shortened to 48 h');
    await screenshot('reason-dialog');
    await dialog.getByRole('button', { name: 'Save with this reason' }).click();
    await page.getByText('Study settings saved.').waitFor();
    const reasons = tidemark.deps.db.$client
      .prepare("select reason from audit_events where study_id = ? and entity = 'study' and action = 'update' order by sequence desc limit 1")
      .get(studyId) as { reason: string };
    expect(reasons.reason).toBe('Protocol amendment 1: turnaround shortened to 48 h');
  });
});
