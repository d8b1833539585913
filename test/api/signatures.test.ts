/**
 * Electronic signatures of reads (21 CFR 11.50, 11.70, 11.200) end to end: re-authentication
 * through the local identity provider's real login form, the 5-minute window on a test clock,
 * API tokens refused, and a signature that shows as not valid once its record was changed.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { ReadWorkspace } from '../../shared/contracts/reading.js';
import { QueueTokens } from '../../server/reading/queue-token.js';
import { DEMO_PASSWORD, DEMO_STUDY } from '../../server/seed/demo-study.js';
import { SESSION_COOKIE } from '../../server/http/authenticate.js';
import { CookieClient, signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };
interface ErrorBody {
  error: { code: string; message: string; details?: unknown };
}

let tidemark: Running;
let reader: Caller;
let tokens: QueueTokens;
/** The app's clock runs this far ahead of the identity provider's (real) clock. */
let clockOffsetMs = 0;
const READER_ID = 'user-reader-1';
const READER_EMAIL = 'reader.one@tidemark.example';
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
const db = () => tidemark.deps.db.$client;

beforeAll(async () => {
  tidemark = await startTidemarkForTest({}, { clock: () => new Date(Date.now() + clockOffsetMs) });
  tokens = new QueueTokens(tidemark.dataDir);
  reader = await signIn(tidemark.url, READER_EMAIL);
});
afterAll(async () => {
  await tidemark?.close();
});

async function call<T>(method: string, path: string, body?: unknown, headers: Record<string, string> = { 'x-csrf-token': reader.csrfToken }) {
  const response = await reader.client.fetch(`${studyUrl()}${path}`, {
    method,
    headers: { 'content-type': 'application/json', ...headers },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await response.text();
  return { status: response.status, body: (text ? JSON.parse(text) : undefined) as T };
}

const usedSessions = new Set<string>();
/** Claims a checked demo session no other test here has used. */
async function claimFreshRead(): Promise<ReadWorkspace> {
  const ids = (db().prepare(`select id from test_sessions where study_id = ? and status = 'checked' order by id`).all(DEMO_STUDY.id) as { id: string }[]).map(
    (row) => row.id,
  );
  const sessionId = ids.find((id) => !usedSessions.has(id))!;
  usedSessions.add(sessionId);
  const claimed = await call<ReadWorkspace>('POST', '/reading/claims', { queueToken: tokens.tokenFor(READER_ID, sessionId) });
  expect(claimed.status).toBe(201);
  return claimed.body;
}

const sign = (read: ReadWorkspace, headers?: Record<string, string>) =>
  call<ReadWorkspace & ErrorBody>('POST', `/reads/${read.readId}/sign`, { version: read.version, meaning: 'authored' }, headers);

/** The session's auth time as stored. */
function storedAuthTime(): string {
  return (db().prepare(`select auth_time as authTime from auth_sessions where user_id = ? and ended_at is null`).get(READER_ID) as { authTime: string }).authTime;
}

/**
 * Drives GET /auth/reauthenticate through the identity provider's login form as a browser would.
 * Returns whether the provider asked for the password, whether it refused it, and where the app sent the browser back.
 */
async function reauthenticate(email: string, password: string, returnTo = '/reading/reads/x', client: CookieClient = reader.client) {
  let response = await client.fetch(`${tidemark.url}/auth/reauthenticate?returnTo=${encodeURIComponent(returnTo)}`);
  expect(response.status).toBe(303);
  let location = new URL(response.headers.get('location')!, tidemark.url).href;
  expect(new URL(location).searchParams.get('prompt')).toBe('login');
  let askedForPassword = false;
  for (let hop = 0; hop < 10; hop++) {
    if (location.startsWith(tidemark.url) && location.includes('/auth/callback')) break;
    if (location.includes('/interaction/')) {
      askedForPassword = true;
      await client.fetch(location);
      response = await client.fetch(`${location}/login`, {
        method: 'POST',
        headers: { 'content-type': 'application/x-www-form-urlencoded' },
        body: new URLSearchParams({ email, password }).toString(),
      });
      if (response.status === 401) return { askedForPassword, refused: true, returnedTo: undefined };
    } else {
      response = await client.fetch(location);
    }
    const next = response.headers.get('location');
    if (!next) throw new Error(`Re-authentication stopped at ${location} with status ${response.status}: ${(await response.text()).slice(0, 2000)}`);
    location = new URL(next, location).href;
  }
  const callback = await client.fetch(location);
  expect(callback.status).toBe(303);
  return { askedForPassword, refused: false, returnedTo: callback.headers.get('location') ?? undefined };
}

describe('signing a read', () => {
  let read: ReadWorkspace;

  beforeAll(async () => {
    read = await claimFreshRead();
    // The reader entered the password ten minutes ago and has worked since.
    db().prepare(`update auth_sessions set auth_time = ? where user_id = ? and ended_at is null`).run(new Date(Date.now() - 10 * 60_000).toISOString(), READER_ID);
  });

  it('is refused with 401 reauthentication-required when the password was entered more than 5 minutes ago', async () => {
    const { status, body } = await sign(read);
    expect(status).toBe(401);
    expect(body.error.code).toBe('reauthentication-required');
    expect(body.error.message).toMatch(/10 minutes ago.*within the last 5 minutes/);
    expect(db().prepare(`select status from reads where id = ?`).get(read.readId)).toEqual({ status: 'in-progress' });
    expect(db().prepare(`select count(*) as n from signatures where record_id = ?`).get(read.readId)).toEqual({ n: 0 });
  });

  it('stays refused after a wrong password at the identity provider', async () => {
    const attempt = await reauthenticate(READER_EMAIL, 'not-the-password');
    expect(attempt).toMatchObject({ askedForPassword: true, refused: true });
    expect((await sign(read)).status).toBe(401);
  });

  it('stays refused when someone else logs in at the identity provider', async () => {
    const before = storedAuthTime();
    // A browser holding reader one's session but no session at the provider, where reader two logs in.
    const otherBrowser = new CookieClient();
    otherBrowser.setCookie(tidemark.url, SESSION_COOKIE, reader.client.cookie(tidemark.url, SESSION_COOKIE)!);
    const attempt = await reauthenticate('reader.two@tidemark.example', DEMO_PASSWORD, '/reading/reads/x', otherBrowser);
    expect(attempt.returnedTo).toBe('/reading/reads/x?reauthentication=reauthentication-mismatch');
    expect(storedAuthTime()).toBe(before);
    expect((await sign(read)).status).toBe(401);
  });

  it('succeeds after a forced password login, showing printed name, meaning and UTC time', async () => {
    const before = storedAuthTime();
    const attempt = await reauthenticate(READER_EMAIL, DEMO_PASSWORD);
    expect(attempt).toMatchObject({ askedForPassword: true, refused: false, returnedTo: '/reading/reads/x?reauthentication=confirmed' });
    expect(storedAuthTime() > before).toBe(true);
    const { status, body } = await sign(read);
    expect(status).toBe(200);
    expect(body.signature).toMatchObject({ printedName: 'Dr Ilse Vandermeer', meaning: 'authored', valid: true });
    expect(body.signature!.signedAt).toMatch(/Z$/);
    const row = db().prepare(`select user_id as userId, record_type as recordType, auth_time as authTime from signatures where record_id = ?`).get(read.readId);
    expect(row).toEqual({ userId: READER_ID, recordType: 'read', authTime: storedAuthTime() });
    read = body;
  });

  it('keeps the same session and CSRF token across the re-authentication', async () => {
    const me = (await (await reader.client.fetch(`${tidemark.url}/api/me`)).json()) as { csrfToken: string };
    expect(me.csrfToken).toBe(reader.csrfToken);
  });

  it('shows the signature as not valid once the signed read was changed in the database', async () => {
    db().prepare(`update reads set feedback_text = 'changed behind the application' where id = ?`).run(read.readId);
    const { body } = await call<ReadWorkspace>('GET', `/reads/${read.readId}`);
    expect(body.signature).toMatchObject({ printedName: 'Dr Ilse Vandermeer', valid: false });
    db().prepare(`update reads set feedback_text = ? where id = ?`).run(read.feedbackText, read.readId);
    expect((await call<ReadWorkspace>('GET', `/reads/${read.readId}`)).body.signature!.valid).toBe(true);
  });

  it('shows the signature as not valid once a signed verdict was changed in the database', async () => {
    db().prepare(`update read_verdicts set comment = 'edited' where read_id = ? and effort_index = 0`).run(read.readId);
    expect((await call<ReadWorkspace>('GET', `/reads/${read.readId}`)).body.signature!.valid).toBe(false);
  });
});

describe('the re-authentication window', () => {
  afterAll(() => {
    clockOffsetMs = 0;
  });

  it('lets further signings through within 5 minutes and refuses them 6 minutes later', async () => {
    await reauthenticate(READER_EMAIL, DEMO_PASSWORD);
    const within = await claimFreshRead();
    expect((await sign(within)).status).toBe(200);

    clockOffsetMs = 6 * 60_000;
    const late = await claimFreshRead();
    const { status, body } = await sign(late);
    expect(status).toBe(401);
    expect(body.error.code).toBe('reauthentication-required');
    expect(body.error.message).toMatch(/6 minutes ago/);
  });

  it('guards returnTo like sign-in does: another host falls back to the start page', async () => {
    const attempt = await reauthenticate(READER_EMAIL, DEMO_PASSWORD, 'https://elsewhere.example/steal');
    expect(attempt.returnedTo).toBe('/?reauthentication=confirmed');
  });
});

describe('an API token', () => {
  it('cannot sign, even right after a password login', async () => {
    clockOffsetMs = 0;
    await reauthenticate(READER_EMAIL, DEMO_PASSWORD);
    const issued = await reader.client.fetch(`${tidemark.url}/api/me/tokens`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'x-csrf-token': reader.csrfToken },
      body: JSON.stringify({ label: 'signing test' }),
    });
    const { token } = (await issued.json()) as { token: string };
    const read = await claimFreshRead();
    const response = await fetch(`${studyUrl()}/reads/${read.readId}/sign`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` },
      body: JSON.stringify({ version: read.version, meaning: 'authored' }),
    });
    expect(response.status).toBe(401);
    const body = (await response.json()) as ErrorBody;
    expect(body.error.code).toBe('reauthentication-required');
    expect(body.error.message).toMatch(/API token cannot sign/);
  });

  it('cannot start a re-authentication', async () => {
    const issued = await reader.client.fetch(`${tidemark.url}/api/me/tokens`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', 'x-csrf-token': reader.csrfToken },
      body: JSON.stringify({ label: 'reauth test' }),
    });
    const { token } = (await issued.json()) as { token: string };
    const response = await fetch(`${tidemark.url}/auth/reauthenticate`, { headers: { authorization: `Bearer ${token}` }, redirect: 'manual' });
    expect(response.status).toBe(403);
    expect(((await response.json()) as ErrorBody).error.code).toBe('session-required');
  });
});
