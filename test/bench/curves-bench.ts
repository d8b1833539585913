/**
 * Curve drawing benchmark: in headless Chromium, the time from navigating to a read's page until
 * both Plotly charts (volume-time and flow-volume) have drawn their traces, for reader.one on a
 * claimed demo session (8 efforts if the queue has one, else the largest). Ten loads of the same
 * page; the first paint and the arrival of the workspace JSON in the same loads are the baselines.
 * Times are the page's own clock (performance.now(), from navigation start).
 *
 * Skipped, with a note in the table, when Chromium or the built web client is missing.
 */
import fs from 'node:fs';
import path from 'node:path';
import { AuthRepository } from '../../server/auth/auth-repository.js';
import { AuthService } from '../../server/auth/auth-service.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { UserRepository } from '../../server/users/user-repository.js';
import type { QueuePage, ReadWorkspace } from '../../shared/contracts/reading.js';
import { CHROMIUM_PATH, launchChromium, signInInBrowser } from '../e2e/browser.js';
import { startTidemarkForTest } from '../support/tidemark-under-test.js';

const WEB_DIR = path.resolve('dist/web/browser');
const GOAL_MS = 300;
const LOADS = 10;
const READER_EMAIL = 'reader.one@tidemark.example';
const WANTED_EFFORTS = 8;

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
    const { token } = auth.issueToken(READER_EMAIL, 'bench');
    const api = `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
    const call = async <T>(method: string, pathName: string, body?: unknown): Promise<T> => {
      const response = await fetch(`${api}${pathName}`, {
        method,
        headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' },
        body: body === undefined ? undefined : JSON.stringify(body),
      });
      if (!response.ok) throw new Error(`${method} ${pathName}: ${response.status} ${await response.text()}`);
      return (await response.json()) as T;
    };
    const queue = await call<QueuePage>('GET', '/reading/queue');
    if (queue.items.length === 0) throw new Error('The demo queue of reader.one is empty: nothing to draw.');
    const item = queue.items.find((candidate) => candidate.effortCount === WANTED_EFFORTS) ?? [...queue.items].sort((a, b) => b.effortCount - a.effortCount)[0];
    const workspace = await call<ReadWorkspace>('POST', '/reading/claims', { queueToken: item.queueToken });
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
      const drawn = timings.map((timing) => timing.chartsDrawnMs).sort((a, b) => a - b);
      const drawnMedian = median(drawn);
      const drawnP95 = percentile(drawn, 95);
      const paintMedian = median(timings.map((timing) => timing.firstContentfulPaintMs));
      const workspaceMedian = median(timings.map((timing) => timing.workspaceArrivedMs));
      return [
        [
          `${figure}, ${item.effortCount} efforts`,
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
