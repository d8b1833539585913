/**
 * The data manager's lock, release and download in Chromium: lock the whole study with a signature
 * on the locks page, ask for a release on the releases page, confirm their identity at the identity
 * provider when the sign-in is too old to sign with, watch the progress bar end, open the release
 * and download the SDTM RE CSV and the SAS transport file, whose bytes must have the SHA-256 the
 * manifest shows. Then the monitor finds the lock and the release in the audit trail.
 *
 * The study holds only this test's sessions (the demo sessions are not seeded, so no query or
 * unread session stands in the way): three are uploaded through the real pipeline, and their
 * final reads are written by the release test-support repository, as the API release test does
 * (the reading room is not part of this journey). Screenshots go to test-output/e2e.
 */
import { createHash, randomUUID } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { strToU8 } from 'fflate';
import type { Page } from 'playwright-core';
import type { Schedule, SessionDetail } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { loadProtocol } from '../../server/protocols/protocol-catalogue.js';
import { ReleaseFixtureRepository } from '../../server/releases/release-fixture-repository.js';
import { finalReadRows } from '../../server/releases/release-fixtures.js';
import { DEMO_PASSWORD, DEMO_STUDY } from '../../server/seed/demo-study.js';
import { SessionRepository } from '../../server/sessions/session-repository.js';
import { signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';
import { launchChromium, SCREENSHOT_DIR, signInInBrowser } from './browser.js';

// TIDEMARK_E2E_WEB_DIR runs the journey against a client built elsewhere (`ng build --output-path ...`).
const WEB_DIR = path.resolve(process.env['TIDEMARK_E2E_WEB_DIR'] ?? 'dist/web/browser');
const DATA_MANAGER = 'data.manager@tidemark.example';
/** The demo data manager's printed name (server/seed/demo-study.ts). */
const DATA_MANAGER_NAME = 'Priya Halloran';
const SESSION_COUNT = 3;

let tidemark: Awaited<ReturnType<typeof startTidemarkForTest>>;
let browser: Awaited<ReturnType<typeof launchChromium>>;
let page: Page;
/** Moves the app's clock forward, so that the sign-in becomes too old to sign with. */
let clockShiftMs = 0;
/** The release's signature as the list row showed it, to compare with the release page. */
let listedSignature = '';

beforeAll(async () => {
  if (!fs.existsSync(path.join(WEB_DIR, 'index.html'))) {
    throw new Error('The web client is not built: run "npm run build" first (npm test does it).');
  }
  tidemark = await startTidemarkForTest(
    { TIDEMARK_WEB_DIR: WEB_DIR, TIDEMARK_SEED_DEMO_SESSIONS: 'false' },
    { clock: () => new Date(Date.now() + clockShiftMs) },
  );
  await uploadReadSessions();
  browser = await launchChromium();
  page = await signInInBrowser(browser.context, tidemark.url, DATA_MANAGER);
  // The shell scrolls inside its content pane, so a tall window shows whole tables in the screenshots.
  await page.setViewportSize({ width: 1366, height: 1300 });
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await tidemark?.close();
});

const shot = (name: string) => page.screenshot({ path: path.join(SCREENSHOT_DIR, `release-${name}.png`), fullPage: true });
const sha256 = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest('hex');
const mainText = async () => ((await page.locator('main').textContent()) ?? '').replace(/\s+/g, ' ');

/** Registers and uploads three clean sessions at site 101 as its coordinator, then writes a signed final read of each. */
async function uploadReadSessions(): Promise<void> {
  const coordinator = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
  const studyUrl = (rest: string) => `${tidemark.url}/api/studies/${DEMO_STUDY.id}${rest}`;
  const post = (url: string, body: string | FormData, json: boolean) =>
    coordinator.client.fetch(url, {
      method: 'POST',
      headers: { 'x-csrf-token': coordinator.csrfToken, ...(json ? { 'content-type': 'application/json' } : {}) },
      body,
    });
  const schedule = (await (await coordinator.client.fetch(studyUrl('/schedule'))).json()) as Schedule;
  for (let seed = 0; seed < SESSION_COUNT; seed++) {
    const subjectCode = `E101-${800 + seed}`;
    expect((await post(studyUrl('/sites/site-101/subjects'), JSON.stringify({ code: subjectCode }), true)).status).toBe(201);
    const registered = await post(
      studyUrl('/sites/site-101/sessions'),
      JSON.stringify({
        subjectCode,
        visitCode: schedule.visits[seed].code,
        timepointCode: schedule.timepoints[0].code,
        bronchodilator: 'pre',
        testedAt: '2026-11-20T09:30:00+01:00',
        demographics: { ageYears: 55 + seed, heightCm: 170, weightKg: 78, sex: seed % 2 === 0 ? 'female' : 'male' },
        technicianCode: 'TECH-07',
        device: { manufacturer: 'Demo devices', model: 'Model 1', serialNumber: 'SN-101-A' },
      }),
      true,
    );
    expect(registered.status).toBe(201);
    const session = (await registered.json()) as SessionDetail;
    const efforts = generateSession({ efforts: 3, base: { fvcL: 3.2 + seed * 0.2, pefLPerS: 6.5 } }, 900 + seed).map((effort) =>
      recordingToSessionEffort(effort.recording),
    );
    const form = new FormData();
    form.append('file', new Blob([strToU8(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts }))]), `e2e-${seed}.json`);
    expect((await post(studyUrl(`/sessions/${session.id}/uploads`), form, false)).status).toBe(201);
    writeFinalRead(session.id, `2026-11-2${seed + 1}T10:00:00.000Z`);
  }
}

/** A signed final read of the session taking the engine's suggestions, and the session marked final. */
function writeFinalRead(sessionId: string, signedAt: string): void {
  const sessions = new SessionRepository(tidemark.deps.db);
  const session = sessions.findSessionById(sessionId)!;
  const fixtures = new ReleaseFixtureRepository(tidemark.deps.db);
  fixtures.insert(
    finalReadRows({
      studyId: DEMO_STUDY.id,
      sessionId,
      uploadId: session.currentUploadId!,
      ageYears: session.ageYears,
      efforts: sessions.effortsOf(session.currentUploadId!),
      reader: { id: 'user-reader-1', name: 'Dr Ilse Vandermeer' },
      signedAt,
      protocol: loadProtocol(DEMO_STUDY.protocolRuleSetId),
      readId: randomUUID(),
    }),
  );
  fixtures.markFinal(sessionId, signedAt);
}

/** Downloads one file of the release through its link, as a person would; answers the suggested name and the bytes. */
async function downloadFromRow(fileName: string): Promise<{ suggested: string; bytes: Buffer; shownSha256: string }> {
  const row = page.locator(`[data-testid=file-row][data-file="${fileName}"]`);
  const shownSha256 = ((await row.getByTestId('file-sha256').textContent()) ?? '').trim();
  const [download] = await Promise.all([page.waitForEvent('download'), row.getByTestId('file-download').click()]);
  const saved = path.join(SCREENSHOT_DIR, `release-download-${fileName}`);
  await download.saveAs(saved);
  expect(await download.failure()).toBeNull();
  return { suggested: download.suggestedFilename(), bytes: fs.readFileSync(saved), shownSha256 };
}

describe("a data manager's lock, release and download, in Chromium", () => {
  it('locks the whole study with a reason and a signature', async () => {
    await page.waitForURL(/\/data-office/);
    await page.getByTestId('area-home').waitFor();
    await shot('home');
    await page.getByRole('link', { name: 'Data locks' }).click();
    await page.waitForURL(/\/data-office\/locks/);
    await page.getByTestId('lock-scope').click();
    await page.getByRole('option', { name: 'Whole study' }).click();
    await page.getByTestId('lock-reason').fill('Database lock for the interim analysis');
    await page.getByTestId('lock-sign').click();
    await page.getByTestId('lock-done').waitFor({ timeout: 15_000 });
    expect(await page.getByTestId('lock-done').textContent()).toMatch(/Locked and signed/);
    expect(await page.getByTestId('active-locks').textContent()).toContain(`Signed: ${DATA_MANAGER_NAME} · Locked ·`);
    await shot('locked');
  });

  it('asks for a release, confirms identity at the identity provider, and follows the build to its end', async () => {
    await page.goto(`${tidemark.url}/data-office`);
    await page.getByRole('link', { name: 'Releases' }).click();
    await page.waitForURL(/\/data-office\/releases/);
    await page.getByText('No release of this study yet.').waitFor();
    await page.getByTestId('new-release').click();
    await page.getByTestId('release-reason').fill('Interim analysis data cut');
    expect(await page.getByTestId('release-scope-summary').textContent()).toMatch(/To release: Whole study of HLX-201/);
    await shot('form');

    clockShiftMs = 6 * 60_000;
    await page.getByTestId('release-sign').click();
    // The sign-in is now six minutes old: the page leaves for the identity provider with the form in the return path.
    await page.waitForURL(/\/interaction\//, { timeout: 15_000 });
    await shot('reauthenticate');
    // The identity provider stamps the new login with the real time: the app's clock follows it again.
    clockShiftMs = 0;
    await page.fill('#email', DATA_MANAGER);
    await page.fill('#password', DEMO_PASSWORD);
    await page.getByRole('button', { name: 'Sign in' }).click();
    await page.waitForURL(/\/data-office\/releases/, { timeout: 30_000 });

    const bar = page.getByTestId('release-progress-bar');
    await bar.waitFor({ timeout: 15_000 });
    // The build ends either way: ready at 100 %, or failed with the reason, which the assertion then shows.
    await page.locator('[data-testid=release-progress-bar][aria-valuenow="100"], app-release-progress [role=alert]').first().waitFor({ timeout: 45_000 });
    expect((await page.getByTestId('release-build').textContent())?.replace(/\s+/g, ' ')).toContain(`Release ready: ${SESSION_COUNT} locked sessions`);
    // The query that carried the form through the round trip is gone.
    expect(new URL(page.url()).searchParams.get('pending')).toBeNull();
    await page.getByTestId('release-row').first().getByText('Ready').waitFor({ timeout: 15_000 });
    // The row's signature line: printed name, meaning and the signing time read from the manifest.
    const signatureLine = page.getByTestId('release-row').first().getByTestId('release-signature-line');
    await signatureLine.waitFor({ timeout: 15_000 });
    listedSignature = ((await signatureLine.textContent()) ?? '').trim();
    expect(listedSignature).toMatch(new RegExp(`^${DATA_MANAGER_NAME} · Released · \\d{4}-\\d{2}-\\d{2} \\d{2}:\\d{2}:\\d{2} UTC$`));
    expect(await page.getByTestId('release-row').first().textContent()).toContain('Whole study');
    expect(await page.getByTestId('release-row').first().getByTestId('release-file-count').textContent()).toMatch(/^\s*8\s*$/);
    await shot('built');
  });

  it('opens the release: signature, verification, manifest and caution', async () => {
    await page.getByTestId('open-release').click();
    await page.waitForURL(/\/data-office\/releases\/[^/]+\/[0-9a-f-]{36}$/);
    await page.getByTestId('release-verification').waitFor({ timeout: 30_000 });
    const text = await mainText();
    // The same signature as the list showed.
    expect(text).toContain(`Signed: ${listedSignature}`);
    expect(text).toContain('valid: the release order is unchanged since signing');
    expect(text).toMatch(/Verified .* every stored file matches its SHA-256/);
    expect(text).toContain('“Interim analysis data cut”');
    expect(await page.getByTestId('file-row').count()).toBe(8);
    expect(await page.getByRole('note', { name: 'Caution' }).textContent()).toMatch(/support, and do not replace, review by qualified staff/);
    // Tall enough for the whole manifest and the caution line in the screenshot.
    await page.setViewportSize({ width: 1366, height: 1700 });
    await shot('detail');
  });

  it('downloads the SDTM RE CSV and the transport file whose bytes have the SHA-256 the manifest shows', async () => {
    const csv = await downloadFromRow('re.csv');
    expect(csv.suggested).toBe('re.csv');
    expect(csv.shownSha256).toMatch(/^[0-9a-f]{64}$/);
    expect(sha256(csv.bytes)).toBe(csv.shownSha256);
    // SDTM RE opens with its identifier variables (CDISC SDTMIG v3.3, RE domain; from memory).
    expect(csv.bytes.toString('utf8').split('\r\n')[0]).toMatch(/^STUDYID,DOMAIN,USUBJID,RESEQ,/);

    const xpt = await downloadFromRow('re.xpt');
    expect(xpt.suggested).toBe('re.xpt');
    expect(sha256(xpt.bytes)).toBe(xpt.shownSha256);
    // SAS transport files open with the library header record (SAS technical note TS-140), in 80-byte records.
    expect(xpt.bytes.subarray(0, 48).toString('latin1')).toBe('HEADER RECORD*******LIBRARY HEADER RECORD!!!!!!!');
    expect(xpt.bytes.length % 80).toBe(0);
  });

  it("shows the lock and the release in the monitor's audit trail", async () => {
    page = await signInInBrowser(browser.context, tidemark.url, 'monitor@tidemark.example');
    await page.setViewportSize({ width: 1366, height: 1300 });
    await page.goto(`${tidemark.url}/oversight/studies/${DEMO_STUDY.id}/audit-trail`);
    await page.getByTestId('audit-row').first().waitFor({ timeout: 30_000 });

    const shownActions = async (entity: string) => {
      await page.getByRole('combobox', { name: /entity/i }).click();
      await page.getByRole('option', { name: new RegExp(`^${entity}$`) }).click();
      const deadline = Date.now() + 15_000;
      let entities: string[] = [];
      while (Date.now() < deadline) {
        entities = [...new Set((await page.locator('[data-testid=audit-row] .entity').allTextContents()).map((t) => t.trim()))];
        if (entities.length === 1 && entities[0] === entity) break;
        await new Promise((resolve) => setTimeout(resolve, 200));
      }
      expect(entities).toEqual([entity]);
      return (await page.locator('[data-testid=audit-row] .action').allTextContents()).map((t) => t.trim());
    };

    expect(await shownActions('release')).toEqual(expect.arrayContaining(['request', 'complete']));
    expect(await mainText()).toContain(DATA_MANAGER_NAME);
    await shot('monitor-trail-release');
    expect(await shownActions('lock')).toContain('lock');
    await shot('monitor-trail-lock');
  });
});
