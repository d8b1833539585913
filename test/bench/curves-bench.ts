/**
 * Curve drawing benchmark: in headless Chromium, the time from navigating to a read's page until
 * both Plotly charts (volume-time and flow-volume) have drawn their traces, for reader.one on a
 * claimed session of 8 efforts: a fictional session of the engine's generator (15 s blows
 * recorded at 1000 Hz), uploaded by a site coordinator before the timing. Ten loads of the same
 * page after one warm-up; the first paint and the arrival of the workspace JSON in the same loads
 * are the baselines. Times are the page's own clock (performance.now(), from navigation start).
 *
 * Skipped, with a note in the table, when Chromium or the built web client is missing.
 */
import fs from 'node:fs';
import path from 'node:path';
import { AuthRepository } from '../../server/auth/auth-repository.js';
import { AuthService } from '../../server/auth/auth-service.js';
import { QueueTokens } from '../../server/reading/queue-token.js';
import { DEMO_STUDY, DEMO_USERS } from '../../server/seed/demo-study.js';
import { UserRepository } from '../../server/users/user-repository.js';
import type { ReadWorkspace } from '../../shared/contracts/reading.js';
import type { Schedule, SessionDetail } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession, type SessionSpec } from '../../shared/spirometry/synthetic/curve-generator.js';
import { CHROMIUM_PATH, launchChromium, signInInBrowser } from '../e2e/browser.js';
import { startTidemarkForTest } from '../support/tidemark-under-test.js';

const WEB_DIR = path.resolve('dist/web/browser');
const GOAL_MS = 300;
const LOADS = 10;
const READER_EMAIL = 'reader.one@tidemark.example';
const COORDINATOR_EMAIL = 'coordinator.101@tidemark.example';
const SITE_ID = 'site-101';
const WANTED_EFFORTS = 8;
/** A full set (ATS/ERS 2019, Graham et al. 2019: usually no more than eight efforts), each as long and as dense as devices record. */
const BENCH_SESSION: SessionSpec = {
  efforts: WANTED_EFFORTS,
  base: { sampleRateHz: 1000, blowDurationS: 15, leadInS: 0.5, tidalBreaths: 0, signal: 'volume', fvcL: 4.2, pefLPerS: 8.5 },
};

/** One page load, in ms from navigation start. */
interface LoadTiming {
  readonly chartsDrawnMs: number;
  readonly firstContentfulPaintMs: number;
  readonly workspaceArrivedMs: number;
}

/** What the in-page functions use of the browser: the server's TypeScript settings carry no DOM types. */
interface PageGlobals {
  readonly document: { querySelectorAll(selector: string): ArrayLike<{ querySelector(selector: string): unknown }> };
  readonly performance: { now(): number; getEntriesByType(type: string): { name: string; startTime: number; responseEnd?: number }[] };
}

/** In the page: the page's time once both Plotly charts have drawn a trace, else false. */
function chartsDrawnAt(): number | false {
  const { document, performance } = globalThis as unknown as PageGlobals;
  const plots = Array.from(document.querySelectorAll('.js-plotly-plot'));
  const drawn = plots.length >= 2 && plots.every((plot) => plot.querySelector('.main-svg .scatterlayer path') !== null);
  return drawn ? performance.now() : false;
}

/**
 * In the page: opens `path` through the app's own router, as a click on a link in the running app
 * does (a history entry and a popstate, which Angular's router follows), and returns the page's time
 * at that moment.
 */
function openInApp(path: string): number {
  const page = globalThis as unknown as {
    history: { pushState(state: unknown, title: string, url: string): void };
    dispatchEvent(event: unknown): void;
    PopStateEvent: new (type: string, init: { state: unknown }) => unknown;
    performance: { now(): number };
  };
  const started = page.performance.now();
  page.history.pushState({}, '', path);
  page.dispatchEvent(new page.PopStateEvent('popstate', { state: {} }));
  return started;
}

/** In the page: whether no curve chart is on the page any more. */
function noCharts(): boolean {
  const { document } = globalThis as unknown as PageGlobals;
  return document.querySelectorAll('.js-plotly-plot').length === 0;
}

/** In the page: first contentful paint and the end of the workspace JSON's response (null when absent). */
function baselineTimes(workspacePath: string): { firstContentfulPaintMs: number | null; workspaceArrivedMs: number | null } {
  const { performance } = globalThis as unknown as PageGlobals;
  const paint = performance.getEntriesByType('paint').find((entry) => entry.name === 'first-contentful-paint');
  const json = performance.getEntriesByType('resource').find((entry) => new URL(entry.name).pathname === workspacePath);
  return { firstContentfulPaintMs: paint ? paint.startTime : null, workspaceArrivedMs: json?.responseEnd ?? null };
}

function percentile(sorted: readonly number[], p: number): number {
  return sorted[Math.min(sorted.length - 1, Math.ceil((p / 100) * sorted.length) - 1)];
}

function median(values: readonly number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
}

type ApiCall = <T>(method: string, pathName: string, body?: unknown) => Promise<T>;

/** Enrols a subject, registers a session and uploads {@link BENCH_SESSION} as a Tidemark session file; returns the session id. */
async function uploadBenchSession(call: ApiCall): Promise<string> {
  const schedule = await call<Schedule>('GET', '/schedule');
  const subjectCode = `B101-${Date.now() % 100_000}`;
  await call('POST', `/sites/${SITE_ID}/subjects`, { code: subjectCode });
  const session = await call<SessionDetail>('POST', `/sites/${SITE_ID}/sessions`, {
    subjectCode,
    visitCode: schedule.visits[0].code,
    timepointCode: schedule.timepoints[0].code,
    bronchodilator: 'pre',
    testedAt: new Date(Date.now() - 86_400_000).toISOString(),
    demographics: { ageYears: 58, heightCm: 174, weightKg: 79, sex: 'male' },
    technicianCode: 'BENCH',
    device: { manufacturer: 'Demo devices', model: 'Model 1', serialNumber: 'SN-101-BENCH' },
  });
  const efforts = generateSession(BENCH_SESSION, 8).map((effort) => recordingToSessionEffort(effort.recording));
  const form = new FormData();
  form.append('file', new Blob([JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts })], { type: 'application/json' }), 'bench-session.json');
  await call('POST', `/sessions/${session.id}/uploads`, form);
  return session.id;
}

/** Rows for the benchmark table: figure, value, goal, ratio to baseline. */
export async function curvesBenchmarkRows(format: (value: number, digits?: number) => string): Promise<string[][]> {
  const figure = `read page: both curve charts drawn, median / p95 of ${LOADS} loads (headless Chromium)`;
  const missing = [
    fs.existsSync(CHROMIUM_PATH) ? undefined : `Chromium not found at ${CHROMIUM_PATH}`,
    fs.existsSync(path.join(WEB_DIR, 'index.html')) ? undefined : 'web client not built (npm run build)',
  ].filter((reason) => reason !== undefined);
  if (missing.length > 0) return [[figure, `skipped: ${missing.join('; ')}`, `< ${GOAL_MS} ms`, '-']];

  const tidemark = await startTidemarkForTest({ TIDEMARK_WEB_DIR: WEB_DIR });
  try {
    const { db, config } = tidemark.deps;
    const auth = new AuthService(new AuthRepository(db), new UserRepository(db), config.session, () => new Date());
    const api = `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
    const callAs = (email: string) => {
      const { token } = auth.issueToken(email, 'bench');
      return async <T>(method: string, pathName: string, body?: unknown): Promise<T> => {
        const form = body instanceof FormData;
        const response = await fetch(`${api}${pathName}`, {
          method,
          headers: { authorization: `Bearer ${token}`, ...(form ? {} : { 'content-type': 'application/json' }) },
          body: body === undefined ? undefined : form ? body : JSON.stringify(body),
        });
        if (!response.ok) throw new Error(`${method} ${pathName}: ${response.status} ${await response.text()}`);
        return (await response.json()) as T;
      };
    };
    const sessionId = await uploadBenchSession(callAs(COORDINATOR_EMAIL));
    const call = callAs(READER_EMAIL);
    const readerId = DEMO_USERS.find((user) => user.email === READER_EMAIL)!.id;
    const queueToken = new QueueTokens(tidemark.dataDir).tokenFor(readerId, sessionId);
    const workspace = await call<ReadWorkspace>('POST', '/reading/claims', { queueToken });
    if (workspace.efforts.length !== WANTED_EFFORTS) throw new Error(`The bench session has ${workspace.efforts.length} efforts, not ${WANTED_EFFORTS}.`);
    const readUrl = `${tidemark.url}/reading/reads/${DEMO_STUDY.id}/${workspace.readId}`;
    const workspacePath = `/api/studies/${DEMO_STUDY.id}/reads/${workspace.readId}`;

    const browser = await launchChromium();
    try {
      const page = await signInInBrowser(browser.context, tidemark.url, READER_EMAIL);
      const timings: LoadTiming[] = [];
      // One load to warm the caches (the static client, the server's queries), then the timed ones.
      for (let load = 0; load <= LOADS; load++) {
        await page.goto(readUrl);
        const chartsDrawnMs = (await page
          .waitForFunction(chartsDrawnAt, undefined, { timeout: 30_000, polling: 'raf' })
          .then((handle) => handle.jsonValue())) as number;
        const { firstContentfulPaintMs, workspaceArrivedMs } = await page.evaluate(baselineTimes, workspacePath);
        if (load > 0) timings.push({ chartsDrawnMs, firstContentfulPaintMs: firstContentfulPaintMs ?? Number.NaN, workspaceArrivedMs: workspaceArrivedMs ?? Number.NaN });
      }
      // Opening the read from inside the running app (the reader's way from the queue): the app is
      // booted and signed in, so this is the read's own cost: its JSON, its curves and the drawing.
      const readPath = new URL(readUrl).pathname;
      const inApp: number[] = [];
      for (let open = 0; open <= LOADS; open++) {
        await page.evaluate(openInApp, '/reading');
        await page.waitForFunction(noCharts, undefined, { timeout: 30_000 });
        const started = await page.evaluate(openInApp, readPath);
        const drawnAt = (await page
          .waitForFunction(chartsDrawnAt, undefined, { timeout: 30_000, polling: 'raf' })
          .then((handle) => handle.jsonValue())) as number;
        if (open > 0) inApp.push(drawnAt - started);
      }
      const inAppMedian = median(inApp);
      const inAppP95 = percentile([...inApp].sort((a, b) => a - b), 95);
      const drawn = timings.map((timing) => timing.chartsDrawnMs).sort((a, b) => a - b);
      const drawnMedian = median(drawn);
      const drawnP95 = percentile(drawn, 95);
      const paintMedian = median(timings.map((timing) => timing.firstContentfulPaintMs));
      const workspaceMedian = median(timings.map((timing) => timing.workspaceArrivedMs));
      return [
        [
          `read opened from inside the app until both curve charts are drawn, median / p95 of ${LOADS}, ${WANTED_EFFORTS} efforts at ${BENCH_SESSION.base.sampleRateHz} Hz (headless Chromium)`,
          `median ${format(inAppMedian)} ms, p95 ${format(inAppP95)} ms`,
          `< ${GOAL_MS} ms${inAppMedian < GOAL_MS ? '' : ' (missed)'}`,
          `${format(inAppMedian / drawnMedian, 2)} (baseline: the same read loaded as a new page, median ${format(drawnMedian)} ms)`,
        ],
        [
          `${figure}, ${WANTED_EFFORTS} efforts at ${BENCH_SESSION.base.sampleRateHz} Hz`,
          `median ${format(drawnMedian)} ms, p95 ${format(drawnP95)} ms`,
          `< ${GOAL_MS} ms${drawnP95 < GOAL_MS ? '' : ' (missed at p95)'}`,
          `${format(drawnMedian / paintMedian, 2)} (baseline: first contentful paint, median ${format(paintMedian)} ms; ` +
            `workspace JSON arrived at median ${format(workspaceMedian)} ms)`,
        ],
      ];
    } finally {
      await browser.close();
    }
  } finally {
    await tidemark.close();
  }
}
