/**
 * Load test (`npm run load`; also a section of `npm run bench`): 100 simulated users of mixed
 * roles on Tidemark over loopback, driven by autocannon for a bounded time (TIDEMARK_LOAD_SECONDS,
 * 30 by default). Each user is one keep-alive connection sending its role's requests in turn, one
 * a second (a think time of about a second, several times quicker than a person clicks):
 * coordinators list their sessions and open one with its curves, two of them register new
 * sessions and upload their files; readers read their queue and their claimed read with its
 * curves; the data manager lists queries and locks; the monitor pages the audit trail and the
 * dashboards. Users start spread over the first second, as people do not click in step.
 *
 * The goal (p95 < 200 ms, no errors) is judged on that paced load. Then the same users without
 * think time (closed loop, each sends its next request as soon as the last is answered) give the
 * capacity: the most requests a second this mix gets from the server.
 *
 * Tidemark runs as `server/main.ts` (what `npm start` runs) in a child process with its local
 * fakes and the demo study, so the load generator here and the server there each have a core.
 * Latency is taken per request from autocannon's response events, per route and overall. The
 * baseline is `GET /api/health` (which asks the database, storage, identity provider and mail
 * relay whether they answer) from the same 100 paced users.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { createInterface } from 'node:readline';
import { fileURLToPath } from 'node:url';
import autocannon from 'autocannon';
import { AuthRepository } from '../../server/auth/auth-repository.js';
import { AuthService } from '../../server/auth/auth-service.js';
import { loadConfig } from '../../server/config.js';
import { openDatabase } from '../../server/db/database.js';
import { seedDemoStudy } from '../../server/seed/demo-seed.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { UserRepository } from '../../server/users/user-repository.js';
import type { QueuePage, ReadWorkspace } from '../../shared/contracts/reading.js';
import type { Schedule, SessionPage } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { formatNumber, markdownTable, percentile, type BenchRow, type NumberFormat } from '../bench/bench-report.js';
import { serverLaunch } from '../support/server-launch.js';
import { throwAwayInstanceEnv } from '../support/tidemark-under-test.js';

const GOAL_P95_MS = 200;
const CONNECTIONS = 100;
const WARM_UP_SECONDS = 3;
/** The baseline's and the capacity's runs: long enough for a stable p95, short enough to keep `npm run bench` bounded. */
const SHORT_PHASE_SECONDS = 10;
/** Requests a second each simulated user sends; an uploading coordinator's upload takes three (enrol, register, upload). */
const USER_REQUESTS_PER_SECOND = 1;

/** Every figure of one run, for the report's rows and the per-route table. */
export interface LoadReport {
  /** The machine's 1-minute load average before the server started: other work skews every figure. */
  readonly loadAverageBefore: number;
  readonly seconds: number;
  readonly connections: number;
  readonly mixed: PhaseStats;
  readonly baseline: PhaseStats;
  /** The same users without think time: the throughput this mix gets at most. */
  readonly capacity: PhaseStats;
  /** Latency per route (method and path pattern) under the mixed load, slowest p95 first. */
  readonly routes: readonly RouteStats[];
  /** Latency per group of users under the mixed load. */
  readonly groups: readonly RouteStats[];
  /** Each read route timed alone before the load, one request at a time: what it costs without queueing, costliest first. */
  readonly alone: readonly { readonly label: string; readonly p50Ms: number }[];
}

/** Latency and counts of one phase. */
export interface PhaseStats {
  readonly requests: number;
  readonly perSecond: number;
  readonly p50Ms: number;
  readonly p95Ms: number;
  readonly p99Ms: number;
  /** Connection errors and timeouts. */
  readonly errors: number;
  readonly non2xx: number;
  /** Status codes other than 2xx, with their count, e.g. "GET /queries 500 x3". */
  readonly unexpected: readonly string[];
}

/** The figures of one route or one group of users. */
export interface RouteStats extends PhaseStats {
  readonly label: string;
}

/** A group of simulated users: one API token, a number of users (connections) and the requests each sends in turn. */
interface UserGroup {
  readonly label: string;
  readonly connections: number;
  readonly requests: LabelledRequest[];
}

/** An autocannon request with the route it belongs to, read back in the response event. */
type LabelledRequest = autocannon.Request & { readonly label: string };

/** What the response event's client carries beyond its declared type (autocannon 9 internals, read-only). */
interface ClientInternals {
  readonly requestIterator?: { readonly currentRequest?: { readonly label?: string } };
}

/** One latency sample of a response. */
interface Sample {
  readonly label: string;
  readonly group: string;
  readonly status: number;
  readonly ms: number;
}

function positiveSeconds(name: string, fallback: number): number {
  const text = process.env[name];
  if (text === undefined || text === '') return fallback;
  const value = Number(text);
  if (!Number.isFinite(value) || value <= 0) throw new Error(`${name} must be a positive number of seconds; it is "${text}".`);
  return value;
}

/** Starts `server/main.ts` as `npm start` does, on a fresh data folder, and returns its URL once it prints it. */
async function startServer(env: NodeJS.ProcessEnv): Promise<{ url: string; child: ChildProcess }> {
  const launch = serverLaunch();
  const child = spawn(process.execPath, [...launch.flags, '--import', 'tsx', 'server/main.ts'], {
    env: { ...launch.env, ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let errors = '';
  child.stderr!.on('data', (chunk: Buffer) => (errors = (errors + chunk.toString('utf8')).slice(-4000)));
  for await (const line of createInterface({ input: child.stdout! })) {
    const match = /Tidemark is running at (\S+)/.exec(line);
    if (match) {
      // Anything printed later is drained, so that a full pipe never stalls the server.
      child.stdout!.resume();
      return { url: match[1], child };
    }
  }
  throw new Error(`Tidemark exited before it started:\n${errors}`);
}

async function stopServer(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return;
  const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
  child.kill('SIGTERM');
  const forced = setTimeout(() => child.kill('SIGKILL'), 10_000);
  await exited;
  clearTimeout(forced);
}

/** API tokens for the simulated users, written into the database before the server opens it (as `npm run token` does). */
function issueTokens(databaseFile: string, env: NodeJS.ProcessEnv, emails: readonly string[]): Map<string, string> {
  const db = openDatabase(databaseFile);
  try {
    seedDemoStudy(db);
    const auth = new AuthService(new AuthRepository(db), new UserRepository(db), loadConfig(env).session, () => new Date());
    return new Map(emails.map((email) => [email, auth.issueToken(email, 'load test').token]));
  } finally {
    db.$client.close();
  }
}

/** A small client for the set-up calls before the load. */
function apiClient(url: string, token: string) {
  return async <T>(method: string, pathName: string, body?: unknown): Promise<T> => {
    const response = await fetch(`${url}/api/studies/${DEMO_STUDY.id}${pathName}`, {
      method,
      headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
    if (!response.ok) throw new Error(`Load test set-up: ${method} ${pathName} answered ${response.status}: ${(await response.text()).slice(0, 300)}`);
    return (await response.json()) as T;
  };
}

/** A read for the reader: the first item of the queue claimed, or the reader's own latest read when the queue is empty. */
async function readFor(call: ReturnType<typeof apiClient>): Promise<string> {
  const queue = await call<QueuePage>('GET', '/reading/queue');
  if (queue.items.length > 0) return (await call<ReadWorkspace>('POST', '/reading/claims', { queueToken: queue.items[0].queueToken })).readId;
  const mine = await call<{ readId: string }[]>('GET', '/reads');
  if (mine.length === 0) throw new Error('Load test set-up: the reader has neither a queue item nor a read in the demo study.');
  return mine[0].readId;
}

/**
 * The upload sequence of a coordinator: enrol a new subject, register its session, upload a file
 * no one sent before.
 */
function uploadRequests(
  api: string,
  siteId: string,
  headers: Record<string, string>,
  schedule: Schedule,
  nextSerial: () => number,
): LabelledRequest[] {
  const efforts = generateSession({ efforts: 3, base: { fvcL: 3.6, pefLPerS: 7.5 } }, 4242).map((effort) => recordingToSessionEffort(effort.recording));
  const boundary = `----tidemark-load-${randomUUID()}`;
  return [
    {
      label: 'POST /sites/:siteId/subjects',
      method: 'POST',
      path: `${api}/sites/${siteId}/subjects`,
      headers: { ...headers, 'content-type': 'application/json' },
      setupRequest: (request, context) => {
        const serial = nextSerial();
        const code = `LOAD-${String(serial).padStart(6, '0')}`;
        Object.assign(context, { code, serial });
        return { ...request, body: JSON.stringify({ code }) };
      },
    },
    {
      label: 'POST /sites/:siteId/sessions',
      method: 'POST',
      path: `${api}/sites/${siteId}/sessions`,
      headers: { ...headers, 'content-type': 'application/json' },
      setupRequest: (request, context) => ({
        ...request,
        body: JSON.stringify({
          subjectCode: (context as { code: string }).code,
          visitCode: schedule.visits[0].code,
          timepointCode: schedule.timepoints[0].code,
          bronchodilator: 'pre',
          testedAt: '2026-11-03T10:00:00+01:00',
          demographics: { ageYears: 52, heightCm: 174, sex: 'male' },
          technicianCode: 'TECH-LOAD',
        }),
      }),
      onResponse: (status, body, context) => {
        if (status === 201) Object.assign(context, { sessionId: (JSON.parse(body) as { id: string }).id });
      },
    },
    {
      label: 'POST /sessions/:sessionId/uploads',
      method: 'POST',
      path: `${api}/sessions/:sessionId/uploads`,
      headers: { ...headers, 'content-type': `multipart/form-data; boundary=${boundary}` },
      setupRequest: (request, context) => {
        const { sessionId, serial: fileSerial } = context as { sessionId?: string; serial: number };
        // Without a registered session (its request failed) the sequence starts again.
        if (!sessionId) return undefined as unknown as autocannon.Request;
        const file = JSON.stringify({
          format: SESSION_DOCUMENT_FORMAT,
          metadata: {},
          // A microsecond shift per file: each is new to the study, as a duplicate would be refused.
          efforts: efforts.map((effort) => ({ ...effort, startTimeS: fileSerial * 1e-6 })),
        });
        const body = Buffer.concat([
          Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="load-${fileSerial}.json"\r\nContent-Type: application/json\r\n\r\n`),
          Buffer.from(file),
          Buffer.from(`\r\n--${boundary}--\r\n`),
        ]);
        return { ...request, path: `${api}/sessions/${sessionId}/uploads`, body };
      },
    },
  ];
}

const REQUESTS_ALONE = 15;

/** Times every GET route of the groups one request at a time, to tell a costly route from a long queue. */
async function timeRoutesAlone(url: string, groups: readonly UserGroup[]): Promise<LoadReport['alone']> {
  const routes = new Map<string, LabelledRequest>();
  for (const request of groups.flatMap((group) => group.requests)) if (request.method === 'GET' && !routes.has(request.label)) routes.set(request.label, request);
  const timed: { label: string; p50Ms: number }[] = [];
  for (const [label, request] of routes) {
    const latencies: number[] = [];
    for (let i = 0; i <= REQUESTS_ALONE; i++) {
      const started = performance.now();
      const response = await fetch(`${url}${request.path}`, { headers: request.headers as Record<string, string> });
      await response.arrayBuffer();
      if (!response.ok) throw new Error(`Load test set-up: ${label} answered ${response.status}.`);
      // The first call warms caches (curves are computed once per file), as the warm-up does for the load.
      if (i > 0) latencies.push(performance.now() - started);
    }
    timed.push({ label, p50Ms: percentile(latencies.sort((a, b) => a - b), 50) });
  }
  return timed.sort((a, b) => b.p50Ms - a.p50Ms);
}

/** The simulated users: the set-up claims the readers' reads and finds the coordinators' sessions. */
async function userGroups(url: string, tokens: Map<string, string>): Promise<UserGroup[]> {
  const api = `/api/studies/${DEMO_STUDY.id}`;
  const auth = (email: string) => ({ authorization: `Bearer ${tokens.get(email)!}` });
  const coordinator = async (email: string, siteId: string, connections: number): Promise<UserGroup> => {
    const call = apiClient(url, tokens.get(email)!);
    const page = await call<SessionPage>('GET', `/sessions?siteId=${siteId}&status=checked&pageSize=1`);
    if (page.items.length === 0) throw new Error(`Load test set-up: the demo study has no checked session at ${siteId}.`);
    const sessionId = page.items[0].id;
    return {
      label: `coordinator ${siteId}: session list, detail, curves`,
      connections,
      requests: [
        { label: 'GET /sessions', method: 'GET', path: `${api}/sessions?pageSize=25`, headers: auth(email) },
        { label: 'GET /sessions/:sessionId', method: 'GET', path: `${api}/sessions/${sessionId}`, headers: auth(email) },
        { label: 'GET /sessions/:sessionId/curves', method: 'GET', path: `${api}/sessions/${sessionId}/curves`, headers: auth(email) },
      ],
    };
  };
  const reader = async (email: string, connections: number): Promise<UserGroup> => {
    const readId = await readFor(apiClient(url, tokens.get(email)!));
    return {
      label: `${email.split('@')[0]}: queue, read workspace, curves`,
      connections,
      requests: [
        { label: 'GET /reading/queue', method: 'GET', path: `${api}/reading/queue`, headers: auth(email) },
        { label: 'GET /reads/:readId', method: 'GET', path: `${api}/reads/${readId}`, headers: auth(email) },
        { label: 'GET /reads/:readId/curves', method: 'GET', path: `${api}/reads/${readId}/curves`, headers: auth(email) },
      ],
    };
  };
  const schedule = await apiClient(url, tokens.get('coordinator.101@tidemark.example')!)<Schedule>('GET', '/schedule');
  // Subject codes and files are numbered across both uploaders and every phase.
  let serial = 0;
  const nextSerial = () => ++serial;
  const uploader = (email: string, siteId: string): UserGroup => ({
    label: `coordinator ${siteId}: new session and upload`,
    connections: 1,
    requests: uploadRequests(api, siteId, auth(email), schedule, nextSerial),
  });
  const dataManager = 'data.manager@tidemark.example';
  const monitor = 'monitor@tidemark.example';
  return [
    await coordinator('coordinator.101@tidemark.example', 'site-101', 14),
    await coordinator('coordinator.102@tidemark.example', 'site-102', 14),
    uploader('coordinator.101@tidemark.example', 'site-101'),
    uploader('coordinator.102@tidemark.example', 'site-102'),
    await reader('reader.one@tidemark.example', 15),
    await reader('reader.two@tidemark.example', 15),
    {
      label: 'data manager: queries, locks',
      connections: 20,
      requests: [
        { label: 'GET /queries', method: 'GET', path: `${api}/queries`, headers: auth(dataManager) },
        { label: 'GET /locks', method: 'GET', path: `${api}/locks`, headers: auth(dataManager) },
      ],
    },
    {
      label: 'monitor: audit trail, dashboards',
      connections: 20,
      requests: [
        { label: 'GET /audit', method: 'GET', path: `${api}/audit?pageSize=50`, headers: auth(monitor) },
        { label: 'GET /performance/sites', method: 'GET', path: `${api}/performance/sites`, headers: auth(monitor) },
        { label: 'GET /performance/readers', method: 'GET', path: `${api}/performance/readers`, headers: auth(monitor) },
      ],
    },
  ];
}

/**
 * Runs every group at once for `seconds` and collects each response's latency. Paced: one
 * autocannon instance per user at {@link USER_REQUESTS_PER_SECOND}, started spread over the first
 * second (users sharing an instance would send in step each second). Closed loop: one instance
 * per group, each connection sending as soon as it has its answer.
 */
async function drive(
  url: string,
  groups: readonly UserGroup[],
  seconds: number,
  pacing: 'paced' | 'closed-loop',
): Promise<{ samples: Sample[]; errors: number; elapsedS: number }> {
  const samples: Sample[] = [];
  let errors = 0;
  const users = pacing === 'paced' ? groups.flatMap((group) => Array.from({ length: group.connections }, () => group)) : [];
  const runs =
    pacing === 'paced'
      ? users.map((group, index) => ({ group, connections: 1, rate: USER_REQUESTS_PER_SECOND, delayMs: (1000 * index) / users.length }))
      : groups.map((group) => ({ group, connections: group.connections, rate: undefined, delayMs: 0 }));
  const started = performance.now();
  await Promise.all(
    runs.map(async ({ group, connections, rate, delayMs }) => {
      await new Promise((resolve) => setTimeout(resolve, delayMs));
      const result = await new Promise<autocannon.Result>((resolve, reject) => {
        const instance = autocannon(
          { url, connections, connectionRate: rate, duration: seconds, requests: group.requests, timeout: 10 },
          (error: unknown, finished) => (error ? reject(error as Error) : resolve(finished)),
        );
        instance.on('response', (client, status, _bytes, ms) => {
          const label = (client as unknown as ClientInternals).requestIterator?.currentRequest?.label ?? 'unknown';
          samples.push({ label, group: group.label, status, ms });
        });
      });
      errors += result.errors;
    }),
  );
  return { samples, errors, elapsedS: (performance.now() - started) / 1000 };
}

function statsOf(samples: readonly Sample[], errors: number, elapsedS: number): PhaseStats {
  const sorted = samples.map((sample) => sample.ms).sort((a, b) => a - b);
  const unexpected = new Map<string, number>();
  for (const sample of samples) {
    if (sample.status < 200 || sample.status > 299) {
      const key = `${sample.label} ${sample.status}`;
      unexpected.set(key, (unexpected.get(key) ?? 0) + 1);
    }
  }
  return {
    requests: samples.length,
    perSecond: samples.length / elapsedS,
    p50Ms: percentile(sorted, 50),
    p95Ms: percentile(sorted, 95),
    p99Ms: percentile(sorted, 99),
    errors,
    non2xx: [...unexpected.values()].reduce((sum, count) => sum + count, 0),
    unexpected: [...unexpected].map(([key, count]) => `${key} x${count}`),
  };
}

function statsBy(samples: readonly Sample[], key: (sample: Sample) => string, elapsedS: number): RouteStats[] {
  const by = new Map<string, Sample[]>();
  for (const sample of samples) {
    const group = by.get(key(sample));
    if (group) group.push(sample);
    else by.set(key(sample), [sample]);
  }
  return [...by].map(([label, group]) => ({ label, ...statsOf(group, 0, elapsedS) })).sort((a, b) => b.p95Ms - a.p95Ms);
}

/** Starts Tidemark, warms it up, runs the mixed load and then the baseline, and stops it. */
export async function runLoadTest(seconds = positiveSeconds('TIDEMARK_LOAD_SECONDS', 30)): Promise<LoadReport> {
  const loadAverageBefore = os.loadavg()[0];
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-load-'));
  const env: NodeJS.ProcessEnv = {
    ...process.env,
    ...throwAwayInstanceEnv(dataDir),
    AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED: 'true',
  };
  try {
    const tokens = issueTokens(loadConfig(env).databaseFile, env, [
      'coordinator.101@tidemark.example',
      'coordinator.102@tidemark.example',
      'reader.one@tidemark.example',
      'reader.two@tidemark.example',
      'data.manager@tidemark.example',
      'monitor@tidemark.example',
    ]);
    const { url, child } = await startServer(env);
    try {
      return { loadAverageBefore, ...(await measure(url, tokens, seconds)) };
    } finally {
      await stopServer(child);
    }
  } finally {
    fs.rmSync(dataDir, { recursive: true, force: true });
  }
}

/** The phases against a started server: routes alone, warm-up, the paced load, its baseline, the closed loop. */
async function measure(url: string, tokens: Map<string, string>, seconds: number): Promise<Omit<LoadReport, 'loadAverageBefore'>> {
  const groups = await userGroups(url, tokens);
  const connections = groups.reduce((sum, group) => sum + group.connections, 0);
  if (connections !== CONNECTIONS) throw new Error(`The user groups add up to ${connections} connections, not ${CONNECTIONS}.`);
  const alone = await timeRoutesAlone(url, groups);
  await drive(url, groups, WARM_UP_SECONDS, 'paced');
  const mixed = await drive(url, groups, seconds, 'paced');
  const health: UserGroup = {
    label: 'health',
    connections: CONNECTIONS,
    requests: [{ label: 'GET /api/health', method: 'GET', path: '/api/health' }],
  };
  const baseline = await drive(url, [health], Math.min(seconds, SHORT_PHASE_SECONDS), 'paced');
  const capacity = await drive(url, groups, Math.min(seconds, SHORT_PHASE_SECONDS), 'closed-loop');
  return {
    seconds,
    connections,
    mixed: statsOf(mixed.samples, mixed.errors, mixed.elapsedS),
    baseline: statsOf(baseline.samples, baseline.errors, baseline.elapsedS),
    capacity: statsOf(capacity.samples, capacity.errors, capacity.elapsedS),
    routes: statsBy(mixed.samples, (sample) => sample.label, mixed.elapsedS),
    groups: statsBy(mixed.samples, (sample) => sample.group, mixed.elapsedS),
    alone,
  };
}

function latencies(stats: PhaseStats, format: NumberFormat): string {
  return `p50 ${format(stats.p50Ms, 1)} ms, p95 ${format(stats.p95Ms, 1)} ms, p99 ${format(stats.p99Ms, 1)} ms`;
}

/** The report's rows: the mixed load against its baseline, then each group of users and the slowest route. */
export function loadRows(report: LoadReport, format: NumberFormat = formatNumber): BenchRow[] {
  const { mixed, baseline, capacity } = report;
  const met = mixed.p95Ms < GOAL_P95_MS && mixed.errors === 0 && mixed.non2xx === 0;
  const slowest = report.routes[0];
  const problems = (stats: PhaseStats) =>
    `errors ${stats.errors}, non-2xx ${stats.non2xx}` + (stats.unexpected.length > 0 ? ` (${stats.unexpected.join(', ')})` : '');
  return [
    {
      figure:
        `load: ${report.connections} simulated users of mixed roles, ${USER_REQUESTS_PER_SECOND} request/s each, for ${format(report.seconds)} s ` +
        '(autocannon over loopback, server in its own process)',
      value: `${format(mixed.perSecond)} req/s; ${latencies(mixed, format)}; ${problems(mixed)}`,
      goal: `p95 < ${GOAL_P95_MS} ms, zero errors${met ? '' : ' (missed)'}`,
      baseline: `GET /api/health from the same ${report.connections} paced users: ${latencies(baseline, format)}; ${problems(baseline)}`,
      ratio: `p95 ${format(mixed.p95Ms / baseline.p95Ms, 2)}`,
    },
    ...report.groups.map((group) => ({
      figure: `  ${group.label} (${format(group.perSecond, 1)} req/s)`,
      value: latencies(group, format) + (group.non2xx > 0 ? `, non-2xx ${group.non2xx}` : ''),
      goal: '-',
      baseline: 'GET /api/health above',
      ratio: `p95 ${format(group.p95Ms / baseline.p95Ms, 2)}`,
    })),
    ...(slowest
      ? [
          {
            figure: `  slowest route at p95: ${slowest.label} (${format(slowest.perSecond, 1)} req/s)`,
            value: latencies(slowest, format),
            goal: '-',
            baseline: 'GET /api/health above',
            ratio: `p95 ${format(slowest.p95Ms / baseline.p95Ms, 2)}`,
          },
        ]
      : []),
    ...(report.alone.length > 0
      ? [
          {
            figure: `  costliest read route alone (one request at a time, before the load): ${report.alone[0].label}`,
            value: `p50 ${format(report.alone[0].p50Ms, 1)} ms`,
            goal: '-',
            baseline: `the cheapest, ${report.alone.at(-1)!.label}: p50 ${format(report.alone.at(-1)!.p50Ms, 1)} ms`,
            ratio: format(report.alone[0].p50Ms / report.alone.at(-1)!.p50Ms, 1),
          },
        ]
      : []),
    {
      figure: `  capacity: the same users without think time (closed loop) for ${format(Math.min(report.seconds, SHORT_PHASE_SECONDS))} s`,
      value: `${format(capacity.perSecond)} req/s; ${latencies(capacity, format)}; ${problems(capacity)}`,
      goal: '-',
      baseline: `the paced load above, ${format(mixed.perSecond)} req/s`,
      ratio: `${format(capacity.perSecond / mixed.perSecond, 2)} x its throughput`,
    },
  ];
}

/** Rows for `npm run bench`. */
export async function loadBenchmarkRows(format: NumberFormat = formatNumber): Promise<BenchRow[]> {
  return loadRows(await runLoadTest(), format);
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  const report = await runLoadTest();
  const routes = [
    '| route | req/s | p50 ms | p95 ms | p99 ms | non-2xx | p50 ms alone, before the load |',
    '| --- | --- | --- | --- | --- | --- | --- |',
    ...report.routes.map(
      (route) =>
        `| ${route.label} | ${formatNumber(route.perSecond, 1)} | ${formatNumber(route.p50Ms, 1)} | ${formatNumber(route.p95Ms, 1)} | ` +
        `${formatNumber(route.p99Ms, 1)} | ${route.non2xx} | ${formatNumber(report.alone.find((alone) => alone.label === route.label)?.p50Ms ?? Number.NaN, 1)} |`,
    ),
  ];
  process.stdout.write(
    `Tidemark load test (node ${process.version}, ${os.cpus().length} cores, load average ${report.loadAverageBefore.toFixed(1)} before the run)\n\n${markdownTable(loadRows(report))}\n\nPer route under the mixed load:\n\n${routes.join('\n')}\n`,
  );
  // Latency is a benchmark figure, never a pass/fail; an answer other than 2xx is a fault.
  process.exitCode = report.mixed.non2xx + report.capacity.non2xx > 0 ? 1 : 0;
}
