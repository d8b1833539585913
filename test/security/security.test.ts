/**
 * The security suite: the real app on loopback with the real fakes, probed the way an attacker
 * or a careless client would. Each passing check adds a row to the table printed at the end
 * (for the README). Overlaps on purpose with test/api/access.test.ts only where this suite
 * looks from another side (CSRF on the multipart upload route, expiry by configured limits);
 * archive bombs and zip path traversal live in test/api/uploads.test.ts and are listed here by
 * reference.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { strToU8, zipSync } from 'fflate';
import { DEMO_PASSWORD, DEMO_STUDY } from '../../server/seed/demo-study.js';
import type { Schedule, SessionDetail, UploadResult } from '../../shared/contracts/sessions.js';
import { effortToCsv, generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { CookieClient, signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type SignedIn = Awaited<ReturnType<typeof signIn>>;

const START = new Date('2026-12-01T09:00:00Z');
let now = START;
/** The plain-http app: short, configured session limits and a small upload rate so they can be reached. */
let app: Running;
/** The same app behind an https public URL: secure cookies and HSTS by configuration alone. */
let secureApp: Running;
let coordinator: SignedIn;
let schedule: Schedule;

const IDLE_MINUTES = 5;
const MAX_HOURS = 1;
const UPLOADS_PER_MINUTE = 10;
const SCRIPT_PAYLOAD = '<script>window.__xss=1</script>';
const ATTRIBUTE_PAYLOAD = '"><img src=x onerror=window.__xss=1>';

const table: { area: string; check: string; evidence: string }[] = [];
/** Adds a row to the printed table; called only after a test's assertions held. */
function passed(area: string, check: string, evidence: string): void {
  table.push({ area, check, evidence });
}

beforeAll(async () => {
  [app, secureApp] = await Promise.all([
    startTidemarkForTest(
      {
        TIDEMARK_SESSION_IDLE_MINUTES: String(IDLE_MINUTES),
        TIDEMARK_SESSION_MAX_HOURS: String(MAX_HOURS),
        TIDEMARK_UPLOAD_RATE_PER_MINUTE: String(UPLOADS_PER_MINUTE),
        TIDEMARK_SEED_DEMO_SESSIONS: 'false',
      },
      { clock: () => now },
    ),
    startTidemarkForTest({ PUBLIC_URL: 'https://tidemark.example', TIDEMARK_SEED_DEMO_SESSIONS: 'false' }),
  ]);
  coordinator = await signIn(app.url, 'coordinator.101@tidemark.example');
  schedule = (await (await coordinator.client.fetch(`${studyUrl(app)}/schedule`)).json()) as Schedule;
}, 120_000);

afterAll(async () => {
  await Promise.all([app?.close(), secureApp?.close()]);
  const width = (key: 'area' | 'check') => Math.max(key.length, ...table.map((row) => row[key].length));
  const line = (row: { area: string; check: string; evidence: string }) =>
    `| ${row.area.padEnd(width('area'))} | ${row.check.padEnd(width('check'))} | ${row.evidence} |`;
  console.log(
    [
      `Security checks passed: ${table.length}`,
      line({ area: 'area', check: 'check', evidence: 'evidence' }),
      `| ${'-'.repeat(width('area'))} | ${'-'.repeat(width('check'))} | --- |`,
      ...table.map(line),
      'Kept in other suites: archive bombs, ../ zip entries and the size limit (test/api/uploads.test.ts); anonymous access to every',
      'route, roles and site scope, token CSRF (test/api/access.test.ts); markup in the session page in Chromium (test/e2e/xss.e2e.ts).',
    ].join('\n'),
  );
});

const studyUrl = (running: Running) => `${running.url}/api/studies/${DEMO_STUDY.id}`;

/** The attributes of one cookie in a response's Set-Cookie headers, lower-cased, or undefined. */
function cookieAttributes(response: Response, name: string): { value: string; attributes: Set<string> } | undefined {
  const line = response.headers.getSetCookie().find((candidate) => candidate.startsWith(`${name}=`));
  if (!line) return undefined;
  const [pair, ...attributes] = line.split(';').map((part) => part.trim());
  return { value: pair.slice(name.length + 1), attributes: new Set(attributes.map((a) => a.toLowerCase())) };
}

/** The CSP directives of a response, by name. */
function csp(response: Response): Map<string, string[]> {
  const header = response.headers.get('content-security-policy') ?? '';
  return new Map(
    header
      .split(';')
      .map((directive) => directive.trim().split(/\s+/))
      .filter((parts) => parts[0])
      .map(([name, ...values]) => [name, values]),
  );
}

/** Signs in through the identity provider's form with a client that may already hold cookies (signIn() starts empty). */
async function signInWith(client: CookieClient, appUrl: string, email: string): Promise<Response> {
  let response = await client.fetch(`${appUrl}/auth/login?returnTo=/site-desk`);
  expect(response.status).toBe(303);
  let location = response.headers.get('location')!;
  for (let hop = 0; hop < 10 && !(location.startsWith(appUrl) && location.includes('/auth/callback')); hop++) {
    if (location.includes('/interaction/')) {
      await client.fetch(location);
      response = await client.fetch(`${location}/login`, {
        method: 'POST',
        headers: { 'content-type': 'application/x-www-form-urlencoded' },
        body: new URLSearchParams({ email, password: DEMO_PASSWORD }).toString(),
      });
    } else {
      response = await client.fetch(location);
    }
    location = new URL(response.headers.get('location')!, response.url || location).href;
  }
  return client.fetch(location);
}

function sendJson(who: SignedIn, method: string, url: string, body: unknown, csrfToken = who.csrfToken) {
  const headers: Record<string, string> = { 'content-type': 'application/json' };
  if (csrfToken) headers['x-csrf-token'] = csrfToken;
  return who.client.fetch(url, { method, headers, body: JSON.stringify(body) });
}

function uploadAs(who: SignedIn, running: Running, sessionId: string, name: string, bytes: Uint8Array, contentType: string, csrfToken = who.csrfToken) {
  const form = new FormData();
  form.append('file', new Blob([bytes], { type: contentType }), name);
  const headers: Record<string, string> = {};
  if (csrfToken) headers['x-csrf-token'] = csrfToken;
  return who.client.fetch(`${studyUrl(running)}/sessions/${sessionId}/uploads`, { method: 'POST', headers, body: form });
}

let subjectCounter = 0;
async function registerSession(technicianCode = 'TECH-SEC'): Promise<SessionDetail> {
  const code = `S101-${String(++subjectCounter).padStart(3, '0')}`;
  expect((await sendJson(coordinator, 'POST', `${studyUrl(app)}/sites/site-101/subjects`, { code })).status).toBe(201);
  const response = await sendJson(coordinator, 'POST', `${studyUrl(app)}/sites/site-101/sessions`, {
    subjectCode: code,
    visitCode: schedule.visits[0].code,
    timepointCode: schedule.timepoints[0].code,
    bronchodilator: 'pre',
    testedAt: '2026-11-20T09:30:00+01:00',
    demographics: { ageYears: 60, heightCm: 170, weightKg: 78, sex: 'male' },
    technicianCode,
  });
  expect(response.status).toBe(201);
  return (await response.json()) as SessionDetail;
}

function effortCsv(seed: number): Uint8Array {
  return strToU8(effortToCsv(generateSession({ efforts: 1, base: { fvcL: 3.2, pefLPerS: 6.5 } }, seed)[0].recording));
}

function expectJsonData(response: Response): void {
  expect(response.headers.get('content-type')).toMatch(/^application\/json/);
  expect(response.headers.get('x-content-type-options')).toBe('nosniff');
}

describe('response headers', () => {
  it('sends a CSP whose script-src allows no inline or eval script, on API and web responses alike', async () => {
    for (const url of [`${app.url}/api/health`, `${app.url}/site-desk`, `${app.url}/api/no-such-route`]) {
      const response = await fetch(url);
      const directives = csp(response);
      expect({ url, scriptSrc: directives.get('script-src') }).toEqual({ url, scriptSrc: ["'self'"] });
      expect(directives.get('default-src')).toEqual(["'self'"]);
      expect(directives.get('object-src')).toEqual(["'none'"]);
      expect(directives.get('frame-ancestors')).toEqual(["'none'"]);
      expect(directives.get('base-uri')).toEqual(["'self'"]);
      expect(directives.has('script-src-attr') ? directives.get('script-src-attr') : ["'none'"]).toEqual(["'none'"]);
      expect(response.headers.get('x-content-type-options')).toBe('nosniff');
    }
    passed('headers', "CSP script-src 'self' only", "no 'unsafe-inline'/'unsafe-eval'; object-src, frame-ancestors 'none'; nosniff");
  });

  it('sends HSTS (and upgrade-insecure-requests) only when PUBLIC_URL is https', async () => {
    const plain = await fetch(`${app.url}/api/health`);
    expect(plain.headers.get('strict-transport-security')).toBeNull();
    expect(csp(plain).has('upgrade-insecure-requests')).toBe(false);
    const secure = await fetch(`${secureApp.url}/api/health`);
    const hsts = secure.headers.get('strict-transport-security') ?? '';
    const maxAge = Number(/max-age=(\d+)/.exec(hsts)?.[1]);
    // 180 days is the floor browsers' preload lists ask for (common practice); helmet sends 365.
    expect(maxAge).toBeGreaterThanOrEqual(180 * 24 * 3600);
    expect(hsts).toMatch(/includeSubDomains/);
    expect(csp(secure).has('upgrade-insecure-requests')).toBe(true);
    passed('headers', 'HSTS under https only', `${hsts}; none on http`);
  });
});

describe('cookies', () => {
  it('marks the sign-in and session cookies HttpOnly, SameSite=Lax, Path=/, and Secure under https only', async () => {
    const rows: string[] = [];
    for (const [running, secure] of [
      [app, false],
      [secureApp, true],
    ] as const) {
      const login = await fetch(`${running.url}/auth/login`, { redirect: 'manual' });
      const { callback } = await signIn(running.url, 'monitor@tidemark.example');
      for (const [response, name] of [
        [login, 'tidemark_login'],
        [callback, 'tidemark_session'],
      ] as const) {
        const cookie = cookieAttributes(response, name);
        expect(cookie).toBeDefined();
        expect({ name, secure, httpOnly: cookie!.attributes.has('httponly'), sameSite: cookie!.attributes.has('samesite=lax'), path: cookie!.attributes.has('path=/'), isSecure: cookie!.attributes.has('secure') }).toEqual({
          name,
          secure,
          httpOnly: true,
          sameSite: true,
          path: true,
          isSecure: secure,
        });
        rows.push(`${name}${secure ? ' (https)' : ''}`);
      }
    }
    passed('cookies', 'HttpOnly; SameSite=Lax; Path=/; Secure per PUBLIC_URL', rows.join(', '));
  });

  it('keeps only a hash of the session id in the database', async () => {
    const { callback } = await signIn(app.url, 'monitor@tidemark.example');
    const value = cookieAttributes(callback, 'tidemark_session')!.value;
    const stored = app.deps.db.$client.prepare('select * from auth_sessions').all() as Record<string, unknown>[];
    expect(JSON.stringify(stored)).not.toContain(value);
    passed('session', 'session id stored hashed', 'cookie value absent from auth_sessions');
  });
});

describe('CSRF', () => {
  it('refuses cookie writes without the header or with a wrong token, on JSON and multipart routes, and stores nothing', async () => {
    const session = await registerSession();
    const rowsBefore = app.deps.db.$client.prepare('select count(*) from uploads').pluck().get();
    const cases: [string, () => Promise<Response>, string][] = [
      ['upload, no header', () => uploadAs(coordinator, app, session.id, 'e.csv', effortCsv(1), 'text/csv', ''), 'csrf-missing'],
      ['upload, wrong token', () => uploadAs(coordinator, app, session.id, 'e.csv', effortCsv(1), 'text/csv', 'forged'), 'csrf-invalid'],
      ['enrol, no header', () => sendJson(coordinator, 'POST', `${studyUrl(app)}/sites/site-101/subjects`, { code: 'CSRF-001' }, ''), 'csrf-missing'],
      ['enrol, wrong token', () => sendJson(coordinator, 'POST', `${studyUrl(app)}/sites/site-101/subjects`, { code: 'CSRF-002' }, 'x'), 'csrf-invalid'],
      [
        'cross-site form post to sign-out',
        () =>
          coordinator.client.fetch(`${app.url}/auth/logout`, {
            method: 'POST',
            headers: { 'content-type': 'application/x-www-form-urlencoded' },
            body: 'a=1',
          }),
        'csrf-missing',
      ],
    ];
    for (const [name, send, code] of cases) {
      const response = await send();
      expect({ name, status: response.status, code: ((await response.json()) as { error: { code: string } }).error.code }).toEqual({ name, status: 403, code });
    }
    expect(app.deps.db.$client.prepare('select count(*) from uploads').pluck().get()).toBe(rowsBefore);
    expect(app.deps.db.$client.prepare(`select count(*) from subjects where code like 'CSRF-%'`).pluck().get()).toBe(0);
    expect((await coordinator.client.fetch(`${app.url}/api/me`)).status).toBe(200);
    passed('CSRF', 'cookie writes need x-csrf-token', `${cases.length} forged writes -> 403, nothing written (token route: test/api/access.test.ts)`);
  });
});

describe('sessions', () => {
  it('gives a new session id at sign-in: a cookie planted before login is ended, not promoted', async () => {
    const attacker = await signIn(app.url, 'coordinator.102@tidemark.example');
    const planted = attacker.client.cookie(new URL(app.url).origin, 'tidemark_session')!;
    const victim = new CookieClient();
    victim.setCookie(new URL(app.url).origin, 'tidemark_session', planted);
    const callback = await signInWith(victim, app.url, 'monitor@tidemark.example');
    expect(callback.status).toBe(303);
    const issued = cookieAttributes(callback, 'tidemark_session')!.value;
    expect(issued).not.toBe(planted);
    const me = (await (await victim.fetch(`${app.url}/api/me`)).json()) as { user: { email: string } };
    expect(me.user.email).toBe('monitor@tidemark.example');
    const withPlanted = await fetch(`${app.url}/api/me`, { headers: { cookie: `tidemark_session=${planted}` } });
    expect(withPlanted.status).toBe(401);
    passed('session', 'fixation: new id at sign-in', 'planted cookie -> 401 after the victim signs in; victim holds a new id');
  });

  it(`expires a session after ${IDLE_MINUTES} idle minutes and after ${MAX_HOURS} h in all, as configured`, async () => {
    const minutes = (n: number) => new Date(START.getTime() + n * 60_000);
    try {
      now = START;
      const idle = await signIn(app.url, 'data.manager@tidemark.example');
      now = minutes(IDLE_MINUTES - 1);
      expect((await idle.client.fetch(`${app.url}/api/me`)).status).toBe(200);
      now = minutes(2 * IDLE_MINUTES - 2);
      expect((await idle.client.fetch(`${app.url}/api/me`)).status).toBe(200);
      now = minutes(3 * IDLE_MINUTES);
      const expired = await idle.client.fetch(`${app.url}/api/me`);
      expect(expired.status).toBe(401);
      expect(((await expired.json()) as { error: { code: string } }).error.code).toBe('session-expired');

      now = START;
      const busy = await signIn(app.url, 'data.manager@tidemark.example');
      let lastOk = 0;
      for (let minute = IDLE_MINUTES - 1; minute < MAX_HOURS * 60; minute += IDLE_MINUTES - 1) {
        now = minutes(minute);
        expect((await busy.client.fetch(`${app.url}/api/me`)).status).toBe(200);
        lastOk = minute;
      }
      now = minutes(MAX_HOURS * 60 + 1);
      const absolute = await busy.client.fetch(`${app.url}/api/me`);
      expect(absolute.status).toBe(401);
      passed('session', 'idle and absolute expiry', `idle ${IDLE_MINUTES} min -> 401; active until ${lastOk} min, then 401 past ${MAX_HOURS} h`);
    } finally {
      now = START;
    }
  });

  it('lets a browser whose session expired sign in again (the stale cookie does not block /auth/login)', async () => {
    try {
      now = START;
      const stale = await signIn(app.url, 'monitor@tidemark.example');
      now = new Date(START.getTime() + (IDLE_MINUTES + 1) * 60_000);
      expect((await stale.client.fetch(`${app.url}/api/me`)).status).toBe(401);
      const callback = await signInWith(stale.client, app.url, 'monitor@tidemark.example');
      expect(callback.status).toBe(303);
      expect((await stale.client.fetch(`${app.url}/api/me`)).status).toBe(200);
      passed('session', 'sign-in again after expiry', 'stale cookie replaced at the callback');
    } finally {
      now = START;
    }
  });
});

describe('rate limits', () => {
  it(`refuses more than ${UPLOADS_PER_MINUTE} uploads a minute per user with 429, without slowing other users`, async () => {
    const busy = await signIn(app.url, 'coordinator.102@tidemark.example');
    const statuses: number[] = [];
    for (let i = 0; i < UPLOADS_PER_MINUTE; i++) {
      // A session that does not exist: the limit counts requests whatever their outcome.
      statuses.push((await uploadAs(busy, app, 'no-such-session', `f${i}.csv`, effortCsv(i), 'text/csv')).status);
    }
    expect(new Set(statuses)).toEqual(new Set([404]));
    const refused = await uploadAs(busy, app, 'no-such-session', 'one-too-many.csv', effortCsv(99), 'text/csv');
    expect(refused.status).toBe(429);
    expect(Number(refused.headers.get('retry-after'))).toBeGreaterThan(0);
    const body = (await refused.json()) as { error: { code: string; message: string } };
    expect(body.error.code).toBe('upload-rate-limited');
    expect(body.error.message).toContain(`at most ${UPLOADS_PER_MINUTE} uploads a minute`);
    // The same user through an API token shares the budget; another coordinator does not.
    const { token } = (await (await sendJson(busy, 'POST', `${app.url}/api/me/tokens`, { label: 'rate test' })).json()) as { token: string };
    const form = new FormData();
    form.append('file', new Blob([effortCsv(100)]), 'bearer.csv');
    const viaToken = await fetch(`${studyUrl(app)}/sessions/no-such-session/uploads`, { method: 'POST', headers: { authorization: `Bearer ${token}` }, body: form });
    expect(viaToken.status).toBe(429);
    expect((await uploadAs(coordinator, app, 'no-such-session', 'other-user.csv', effortCsv(101), 'text/csv')).status).toBe(404);
    passed('rate limit', `uploads: ${UPLOADS_PER_MINUTE}/min per user (TIDEMARK_UPLOAD_RATE_PER_MINUTE)`, `request ${UPLOADS_PER_MINUTE + 1} -> 429 + Retry-After; token shares it; other user unaffected`);
  });

  it('refuses more than 30 sign-in starts a minute from one address with 429', async () => {
    const answers: { status: number; remaining: number }[] = [];
    let policy = '';
    for (let i = 0; i < 31; i++) {
      const response = await fetch(`${secureApp.url}/auth/login`, { redirect: 'manual' });
      policy = response.headers.get('ratelimit-policy') ?? '';
      answers.push({ status: response.status, remaining: Number(/r=(\d+)/.exec(response.headers.get('ratelimit') ?? '')?.[1]) });
    }
    expect(policy).toMatch(/q=30; w=60/);
    // Earlier tests started sign-ins on this app too, so the 429 may come before the 31st of this burst: it comes right after the budget is spent.
    const first429 = answers.findIndex((answer) => answer.status === 429);
    expect(first429).toBeGreaterThan(0);
    expect(answers[first429 - 1]).toEqual({ status: 303, remaining: 0 });
    expect(answers.slice(0, first429).every((answer) => answer.status === 303)).toBe(true);
    expect(answers.slice(first429).every((answer) => answer.status === 429)).toBe(true);
    passed('rate limit', 'sign-in: 30/min per address', `429 once 30 starts fell in the minute (start ${first429 + 1} of this burst; earlier tests made the rest)`);
  });
});

describe('uploads judged by content, originals never rendered', () => {
  it('checks a CSV sent as image/png by its content, and serves every original as an attachment', async () => {
    const session = await registerSession();
    const disguised = await uploadAs(coordinator, app, session.id, 'efforts.png', effortCsv(7), 'image/png');
    expect(disguised.status).toBe(201);
    const result = (await disguised.json()) as UploadResult;
    expect(result.upload.detectedFormat).toBe('effort-csv');
    const original = await coordinator.client.fetch(`${studyUrl(app)}/sessions/${session.id}/uploads/${result.upload.id}/original`);
    expect(original.headers.get('content-type')).toBe('application/octet-stream');
    expect(original.headers.get('x-content-type-options')).toBe('nosniff');
    expect(original.headers.get('content-disposition')).toMatch(/^attachment; filename="?efforts\.png"?$/);

    // HTML sent as text/html: refused by content, kept, and still downloaded as bytes, never as a page.
    const htmlSession = await registerSession();
    const html = strToU8(`<!doctype html><html><body>${SCRIPT_PAYLOAD}</body></html>`);
    const refused = await uploadAs(coordinator, app, htmlSession.id, 'page.html', html, 'text/html');
    expect(refused.status).toBe(422);
    const refusal = (await refused.json()) as { error: { message: string; details: { uploadId: string } } };
    expect(refusal.error.message).toMatch(/not a format/i);
    const stored = await coordinator.client.fetch(`${studyUrl(app)}/sessions/${htmlSession.id}/uploads/${refusal.error.details.uploadId}/original`);
    expect(stored.headers.get('content-type')).toBe('application/octet-stream');
    expect(stored.headers.get('content-disposition')).toMatch(/^attachment;/);
    expect(stored.headers.get('x-content-type-options')).toBe('nosniff');
    expect(csp(stored).get('script-src')).toEqual(["'self'"]);
    passed('uploads', 'content decides the format; originals are attachments', 'CSV as image/png -> effort-csv; HTML -> 422, served octet-stream + nosniff + attachment');
  });

  it('refuses a zip of 5000 tiny entries naming the limit (bombs and ../ entries: test/api/uploads.test.ts)', async () => {
    const session = await registerSession();
    const entries = Object.fromEntries(Array.from({ length: 5000 }, (_, i) => [`e${i}.csv`, strToU8('x')]));
    const response = await uploadAs(coordinator, app, session.id, 'many.zip', zipSync(entries), 'application/zip');
    expect(response.status).toBe(422);
    const message = ((await response.json()) as { error: { message: string } }).error.message;
    expect(message).toMatch(new RegExp(`many\\.zip: holds more than the ${app.deps.config.uploads.maxZipEntries} entries accepted`));
    passed('uploads', 'zip entry count limit', `5000 entries -> 422 (limit ${app.deps.config.uploads.maxZipEntries}); bomb and traversal in uploads.test.ts`);
  });
});

describe('free text comes back as data, never as markup', () => {
  it('returns a technician code and a file name holding markup verbatim in JSON, and the download name quoted', async () => {
    const session = await registerSession(`<img src=x onerror=window.__xss=1>`);
    expect(session.technicianCode).toBe('<img src=x onerror=window.__xss=1>');
    const fileName = `${ATTRIBUTE_PAYLOAD}.csv`;
    const uploaded = await uploadAs(coordinator, app, session.id, fileName, effortCsv(8), 'text/csv');
    expect(uploaded.status).toBe(201);
    expectJsonData(uploaded);
    const result = (await uploaded.json()) as UploadResult;
    // Browsers (and undici) send a double quote in a multipart file name as %22 (HTML Living Standard, multipart/form-data encoding).
    expect(result.upload.originalName.replace(/%22/g, '"')).toBe(fileName);
    const detail = await coordinator.client.fetch(`${studyUrl(app)}/sessions/${session.id}`);
    expectJsonData(detail);
    expect(((await detail.json()) as SessionDetail).technicianCode).toBe('<img src=x onerror=window.__xss=1>');
    const original = await coordinator.client.fetch(`${studyUrl(app)}/sessions/${session.id}/uploads/${result.upload.id}/original`);
    // The name is one quoted-string (RFC 6266), its quotes escaped as quoted-pairs, so it cannot end the header's value early.
    const disposition = /^attachment; filename="((?:[^"\\]|\\.)*)"$/.exec(original.headers.get('content-disposition') ?? '');
    expect(disposition?.[1].replace(/\\(.)/g, '$1')).toBe(result.upload.originalName);
    await app.services.messages.settle();
    const receipt = app.fakes.mail!.messages.map((raw) => raw.replace(/=\r?\n/g, '')).find((raw) => raw.includes('onerror'));
    expect(receipt).toBeDefined();
    expect(receipt).not.toMatch(/text\/html/i);
    passed('XSS', 'technician code, file name', 'JSON verbatim + nosniff; download name one escaped quoted-string (RFC 6266); receipt e-mail text/plain only');
  });

  it('returns an invited person\'s name, a query and its answer verbatim in JSON', async () => {
    const admin = await signIn(app.url, 'admin@tidemark.example');
    const invited = await sendJson(admin, 'POST', `${studyUrl(app)}/people`, {
      email: 'xss.person@tidemark.example',
      name: SCRIPT_PAYLOAD,
      role: 'monitor',
      // Sessions exist by now, so a role change needs a reason (free text too).
      reason: `added for the security suite ${ATTRIBUTE_PAYLOAD}`,
    });
    expect({ status: invited.status, body: invited.status === 201 ? '' : await invited.text() }).toEqual({ status: 201, body: '' });
    expectJsonData(invited);
    const people = await admin.client.fetch(`${studyUrl(app)}/people`);
    expectJsonData(people);
    expect(((await people.json()) as { name: string }[]).some((person) => person.name === SCRIPT_PAYLOAD)).toBe(true);

    const session = await registerSession();
    const manager = await signIn(app.url, 'data.manager@tidemark.example');
    const question = `Please check ${ATTRIBUTE_PAYLOAD} ${SCRIPT_PAYLOAD}`;
    const opened = await sendJson(manager, 'POST', `${studyUrl(app)}/sessions/${session.id}/queries`, { question });
    expect(opened.status).toBe(201);
    expectJsonData(opened);
    const query = (await opened.json()) as { id: string; question: string };
    expect(query.question).toBe(question);
    const answer = `Checked: ${SCRIPT_PAYLOAD}`;
    const answered = await sendJson(coordinator, 'POST', `${studyUrl(app)}/queries/${query.id}/answers`, { body: answer });
    expect(answered.status).toBeLessThan(300);
    const thread = await coordinator.client.fetch(`${studyUrl(app)}/sessions/${session.id}/queries`);
    expectJsonData(thread);
    const listed = (await thread.json()) as { question: string; messages: { body: string }[] }[];
    expect(listed[0].question).toBe(question);
    expect(listed[0].messages.map((message) => message.body)).toContain(answer);
    passed('XSS', 'invited name, query text and answer', 'JSON verbatim + nosniff (the client escapes on display)');
  });

  it('returns a reader\'s effort comment and feedback verbatim in JSON', async () => {
    const session = await registerSession();
    const files = generateSession({ efforts: 3, base: { fvcL: 3.2, pefLPerS: 6.5 } }, 4711).map((effort) => effortToCsv(effort.recording));
    const zip = zipSync(Object.fromEntries(files.map((csv, i) => [`e${i + 1}.csv`, strToU8(csv)])));
    expect((await uploadAs(coordinator, app, session.id, 'read-me.zip', zip, 'application/zip')).status).toBe(201);
    const reader = await signIn(app.url, 'reader.one@tidemark.example');
    const queue = (await (await reader.client.fetch(`${studyUrl(app)}/reading/queue`)).json()) as { items: { queueToken: string }[] };
    expect(queue.items.length).toBeGreaterThan(0);
    const claimed = await sendJson(reader, 'POST', `${studyUrl(app)}/reading/claims`, { queueToken: queue.items[0].queueToken });
    expect(claimed.status).toBe(201);
    const workspace = (await claimed.json()) as { readId: string; version: number; verdicts: { effortIndex: number; fev1Verdict: string; fvcVerdict: string; findings: string[] }[] };
    const verdicts = workspace.verdicts.map((verdict) => ({ ...verdict, comment: `${ATTRIBUTE_PAYLOAD} ${SCRIPT_PAYLOAD}` }));
    const saved = await sendJson(reader, 'PUT', `${studyUrl(app)}/reads/${workspace.readId}`, {
      version: workspace.version,
      verdicts,
      feedbackText: SCRIPT_PAYLOAD,
    });
    expect(saved.status).toBe(200);
    expectJsonData(saved);
    const reread = (await (await reader.client.fetch(`${studyUrl(app)}/reads/${workspace.readId}`)).json()) as { verdicts: { comment: string }[]; feedbackText: string };
    expect(reread.verdicts[0].comment).toBe(`${ATTRIBUTE_PAYLOAD} ${SCRIPT_PAYLOAD}`);
    expect(reread.feedbackText).toBe(SCRIPT_PAYLOAD);
    passed('XSS', 'reader comment and feedback', 'JSON verbatim + nosniff');
  });

  it('escapes markup in the HTML the server itself renders (identity provider pages, fallback error pages)', async () => {
    const issuer = app.deps.config.identity.issuer!;
    const login = await fetch(`${app.url}/auth/login`, { redirect: 'manual' });
    const interaction = login.headers.get('location')!;
    // The local identity provider's login form, after a failed attempt with markup as the e-mail.
    const client = new CookieClient();
    const authorize = await client.fetch(interaction);
    const interactionUrl = new URL(authorize.headers.get('location')!, issuer).href;
    const page = await client.fetch(interactionUrl);
    expect(page.headers.get('content-type')).toMatch(/text\/html/);
    const failed = await client.fetch(`${interactionUrl}/login`, {
      method: 'POST',
      headers: { 'content-type': 'application/x-www-form-urlencoded' },
      body: new URLSearchParams({ email: SCRIPT_PAYLOAD, password: ATTRIBUTE_PAYLOAD }).toString(),
    });
    expect(failed.status).toBe(401);
    const failedHtml = await failed.text();
    expect(failedHtml).not.toContain('<script>window.__xss');
    expect(failedHtml).not.toContain('<img src=x');

    const pages: [string, string, RequestInit][] = [
      ['identity provider, unknown interaction', `${issuer}/interaction/${encodeURIComponent(SCRIPT_PAYLOAD)}`, {}],
      ['identity provider, bad authorization request', `${issuer}/auth?client_id=${encodeURIComponent(SCRIPT_PAYLOAD)}&response_type=code&scope=openid`, {}],
      ['app, unmatched non-GET path', `${app.url}/${encodeURIComponent(SCRIPT_PAYLOAD)}`, { method: 'POST' }],
      ['app, unknown API path', `${app.url}/api/${encodeURIComponent(SCRIPT_PAYLOAD)}`, {}],
    ];
    for (const [name, url, init] of pages) {
      const response = await fetch(url, { ...init, redirect: 'manual' });
      const body = await response.text();
      expect({ name, raw: body.includes('<script>window.__xss') || body.includes('<img src=x') }).toEqual({ name, raw: false });
      if (!/text\/html/.test(response.headers.get('content-type') ?? '')) continue;
      expect({ name, escaped: /&lt;script&gt;|%3Cscript%3E|&#60;script&#62;/i.test(body) || !body.includes('xss') }).toEqual({ name, escaped: true });
    }
    passed('XSS', 'server-rendered HTML escapes', `identity provider login/error pages, app 404 pages (${pages.length + 1} probes)`);
  });
});
