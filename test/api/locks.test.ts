/**
 * Data locks end to end: the real app, a real SQLite file, the identity provider and the SMTP
 * catcher on loopback. A data manager locks a site, a subject, a visit, a session and the whole
 * study with a reason and an electronic signature (21 CFR 11.50, 11.70, 11.200); open queries block
 * a lock; unlocking needs a reason and a signature; a signature replayed on another lock is shown
 * not valid; everything is in the audit trail. Demo data is fictional.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { LockList, LockView } from '../../shared/contracts/locks.js';
import type { Query } from '../../shared/contracts/reading.js';
import type { SessionPage } from '../../shared/contracts/sessions.js';
import { lockedContent } from '../../server/locks/lock-scope.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };
type ErrorBody = { error: { code: string; message: string; details?: Record<string, unknown> } };

let tidemark: Running;
let dataManager: Caller;
let monitor: Caller;
let coordinator101: Caller;
let coordinator102: Caller;
const studyPath = (rest = '') => `/api/studies/${DEMO_STUDY.id}${rest}`;
const db = () => tidemark.deps.db.$client;

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  [dataManager, monitor, coordinator101, coordinator102] = await Promise.all(
    ['data.manager@tidemark.example', 'monitor@tidemark.example', 'coordinator.101@tidemark.example', 'coordinator.102@tidemark.example'].map(
      (email) => signIn(tidemark.url, email),
    ),
  );
});
afterAll(async () => {
  await tidemark?.close();
});

async function call<T = unknown>(caller: Caller, method: string, path: string, body?: unknown): Promise<{ status: number; body: T }> {
  const response = await caller.client.fetch(`${tidemark.url}${path}`, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await response.text();
  return { status: response.status, body: (text ? JSON.parse(text) : undefined) as T };
}

const lock = (body: Record<string, unknown>, caller = dataManager) => call<LockView & ErrorBody>(caller, 'POST', studyPath('/locks'), body);
const unlock = (lockId: string, reason: string, caller = dataManager) =>
  call<LockView & ErrorBody>(caller, 'POST', studyPath(`/locks/${lockId}/unlock`), { reason });

function count(table: string): number {
  return db().prepare(`select count(*) from ${table}`).pluck().get() as number;
}

function auditOf(lockId: string) {
  return db()
    .prepare(`select action, user_id as userId, role, site_id as siteId, reason, new_value as newValue from audit_events where entity = 'lock' and entity_id = ? order by sequence`)
    .all(lockId) as { action: string; userId: string; role: string; siteId: string | null; reason: string | null; newValue: string }[];
}

/** A demo session of a subject, as the data manager's session list gives it. */
async function sessionOf(subjectCode: string) {
  const page = await call<SessionPage>(dataManager, 'GET', studyPath(`/sessions?subjectCode=${subjectCode}&pageSize=50`));
  expect(page.status).toBe(200);
  expect(page.body.items.length).toBeGreaterThan(0);
  return page.body.items[0];
}

/** Makes the caller's last password entry at the identity provider older than the 5 minutes a signature allows. */
function ageLastPasswordEntry(userId: string, minutes: number): void {
  const authTime = new Date(Date.now() - minutes * 60_000).toISOString();
  db().prepare('update auth_sessions set auth_time = ? where user_id = ? and ended_at is null').run(authTime, userId);
}

/**
 * Re-authenticates as a browser does: GET /auth/reauthenticate, the identity provider's login form
 * with the password again, and back to returnTo. Returns where the app sent the browser.
 */
async function reauthenticate(caller: Caller, email: string, returnTo: string): Promise<string> {
  let response = await caller.client.fetch(`${tidemark.url}/auth/reauthenticate?returnTo=${encodeURIComponent(returnTo)}`);
  expect(response.status).toBe(303);
  let location = new URL(response.headers.get('location')!, tidemark.url).href;
  for (let hop = 0; hop < 12; hop++) {
    if (location.startsWith(tidemark.url) && !location.includes('/auth/callback')) return location.slice(tidemark.url.length);
    if (location.includes('/interaction/')) {
      await caller.client.fetch(location);
      response = await caller.client.fetch(`${location}/login`, {
        method: 'POST',
        headers: { 'content-type': 'application/x-www-form-urlencoded' },
        body: new URLSearchParams({ email, password: 'tidemark-demo' }).toString(),
      });
    } else {
      response = await caller.client.fetch(location);
    }
    const next = response.headers.get('location');
    if (!next) throw new Error(`Re-authentication stopped at ${location} with status ${response.status}`);
    location = new URL(next, location).href;
  }
  throw new Error('Re-authentication did not come back to the app');
}

describe('locking each scope', () => {
  it.each([
    ['a site, by its number', { scope: 'site', scopeId: '102' }, 'Site 102 (Clínica Respiratoria Alcorán)', 'site-102'],
    ['a subject, by its code', { scope: 'subject', scopeId: '201-001' }, 'Subject 201-001 (site 201)', 'site-201'],
    ['a visit across subjects, by its code', { scope: 'visit', scopeId: 'V4' }, 'Visit V4 (Week 12), all subjects', null],
    ['the whole study, without an id', { scope: 'study' }, 'The whole study HLX-201', null],
  ])('locks %s with a signature meaning "locked", audits it, refuses writes there and unlocks it', async (_label, body, words, auditSiteId) => {
    const reason = `Cleaned for the interim analysis (${body.scope})`;
    const locked = await lock({ ...body, reason });
    expect(locked.status).toBe(201);
    expect(locked.body).toMatchObject({ scope: body.scope, target: words, reason, lockedBy: 'Priya Halloran', active: true, signaturesValid: true });
    expect(locked.body.signatures).toEqual([
      { printedName: 'Priya Halloran', meaning: 'locked', signedAt: expect.stringMatching(/Z$/), valid: true },
    ]);
    expect(auditOf(locked.body.id)).toEqual([
      expect.objectContaining({ action: 'lock', userId: 'user-data-manager', role: 'data-manager', siteId: auditSiteId, reason }),
    ]);

    // A subject enrolled at site 102 is data of that site and of the study.
    if (body.scope === 'site' || body.scope === 'study') {
      const enrol = await call<ErrorBody>(coordinator102, 'POST', studyPath('/sites/site-102/subjects'), { code: `L${body.scope.slice(0, 2)}-001` });
      expect(enrol.status).toBe(409);
      expect(enrol.body.error).toMatchObject({ code: 'locked', details: { lockId: locked.body.id, reason } });
      expect(enrol.body.error.message).toContain(reason);
    }

    const unlocked = await unlock(locked.body.id, 'Sponsor asked to re-open for a late correction');
    expect(unlocked.status).toBe(200);
    expect(unlocked.body).toMatchObject({ active: false, unlockedBy: 'Priya Halloran', unlockReason: 'Sponsor asked to re-open for a late correction', signaturesValid: true });
    expect(unlocked.body.signatures.map((s) => [s.meaning, s.valid])).toEqual([
      ['locked', true],
      ['unlocked', true],
    ]);
    expect(auditOf(locked.body.id).map((row) => [row.action, row.reason])).toEqual([
      ['lock', reason],
      ['unlock', 'Sponsor asked to re-open for a late correction'],
    ]);
  });

  it('locks one session by its id; a write to it is refused, a write to another session of the subject is not', async () => {
    const session = await sessionOf('101-001');
    const locked = await lock({ scope: 'session', scopeId: session.id, reason: 'Session reviewed and frozen' });
    expect(locked.status).toBe(201);
    expect(locked.body.target).toBe(
      `The session of subject 101-001, visit ${session.visitCode}, timepoint ${session.timepointCode}, ${session.bronchodilator}-bronchodilator (site 101)`,
    );
    const refused = await call<ErrorBody>(coordinator101, 'PATCH', studyPath(`/sessions/${session.id}`), { technicianCode: 'TECH-42', reason: 'typo' });
    expect(refused.status).toBe(409);
    expect(refused.body.error.code).toBe('locked');
    expect(refused.body.error.message).toContain('Session reviewed and frozen');

    const sibling = (await call<SessionPage>(dataManager, 'GET', studyPath('/sessions?subjectCode=101-001&pageSize=50'))).body.items.find(
      (item) => item.id !== session.id,
    )!;
    const allowed = await call(coordinator101, 'PATCH', studyPath(`/sessions/${sibling.id}`), { technicianCode: 'TECH-42', reason: 'typo in technician code' });
    expect(allowed.status).toBe(200);
    expect((await unlock(locked.body.id, 'Frozen by mistake')).status).toBe(200);
  });

  it('refuses a lock already active on the same data with 409 lock-exists, and stores nothing', async () => {
    const first = await lock({ scope: 'site', scopeId: 'site-301', reason: 'Site closed out' });
    expect(first.status).toBe(201);
    const [locks, signatures, audit] = [count('data_locks'), count('signatures'), count('audit_events')];
    const again = await lock({ scope: 'site', scopeId: '301', reason: 'Site closed out, again' });
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('lock-exists');
    expect(again.body.error.message).toContain('Site 301');
    expect([count('data_locks'), count('signatures'), count('audit_events')]).toEqual([locks, signatures, audit]);
    expect((await unlock(first.body.id, 'Site reopened for a repeat visit')).status).toBe(200);
  });

  it.each([
    ['a site number that does not exist', { scope: 'site', scopeId: '999' }, /no site "999".*101, 102, 201, 301/],
    ['a visit code that does not exist', { scope: 'visit', scopeId: 'V9' }, /no visit "V9".*SCR, V2, V3, V4, V5/],
    ['a subject code that does not exist', { scope: 'subject', scopeId: '999-999' }, /no subject "999-999"/],
    ['another study as the target of a study lock', { scope: 'study', scopeId: 'OTHER-1' }, /"OTHER-1" names another/],
  ])('refuses %s with 422 naming what exists', async (_label, body, message) => {
    const response = await lock({ ...body, reason: 'Trying a bad target' });
    expect(response.status).toBe(422);
    expect(response.body.error.code).toBe('lock-target-unknown');
    expect(response.body.error.message).toMatch(message);
  });

  it('refuses a lock without a reason, or a scope other than the study without a target, with 400 naming the field', async () => {
    const noReason = await lock({ scope: 'study', reason: '' });
    expect(noReason.status).toBe(400);
    expect(noReason.body.error.message).toMatch(/reason/);
    const noTarget = await lock({ scope: 'site', reason: 'Site closed out' });
    expect(noTarget.status).toBe(400);
    expect(noTarget.body.error.message).toMatch(/scopeId/);
  });
});

describe('open queries block a lock', () => {
  it('refuses with 409 open-queries naming how many are not closed, until they are closed', async () => {
    const session = await sessionOf('102-002');
    const opened = await call<Query>(dataManager, 'POST', studyPath(`/sessions/${session.id}/queries`), {
      question: 'The height differs from screening by 6 cm: please confirm.',
      requestRepeat: false,
    });
    expect(opened.status).toBe(201);
    const answered = await call(coordinator102, 'POST', studyPath(`/queries/${opened.body.id}/answers`), { body: 'Height re-measured: 171 cm is right.' });
    expect(answered.status).toBe(201);

    const locksBefore = count('data_locks');
    for (const body of [
      { scope: 'session', scopeId: session.id },
      { scope: 'subject', scopeId: '102-002' },
      { scope: 'site', scopeId: '102' },
      { scope: 'study' },
    ]) {
      const refused = await lock({ ...body, reason: 'Frozen for the interim analysis' });
      expect(refused.status).toBe(409);
      expect(refused.body.error).toMatchObject({ code: 'open-queries', details: { openQueries: 1 } });
      expect(refused.body.error.message).toMatch(/has 1 query not closed yet/);
    }
    expect(count('data_locks')).toBe(locksBefore);
    // Another site's data is not held up by this query.
    const elsewhere = await lock({ scope: 'site', scopeId: '201', reason: 'Site 201 cleaned' });
    expect(elsewhere.status).toBe(201);
    expect((await unlock(elsewhere.body.id, 'Locked for the test only')).status).toBe(200);

    expect((await call(dataManager, 'POST', studyPath(`/queries/${opened.body.id}/close`))).status).toBe(200);
    const locked = await lock({ scope: 'session', scopeId: session.id, reason: 'Query closed; frozen' });
    expect(locked.status).toBe(201);
    expect((await unlock(locked.body.id, 'Locked for the test only')).status).toBe(200);
  });
});

describe('who may lock, and re-authentication', () => {
  it('does not let a monitor lock (403) but shows them the locks; a site coordinator sees none (403)', async () => {
    const refused = await lock({ scope: 'study', reason: 'Monitor trying to lock' }, monitor);
    expect(refused.status).toBe(403);
    expect(refused.body.error.message).toMatch(/data manager/);
    expect((await call(monitor, 'GET', studyPath('/locks'))).status).toBe(200);
    expect((await call(coordinator101, 'GET', studyPath('/locks'))).status).toBe(403);
  });

  it('answers 401 reauthentication-required when the password was entered too long ago, storing nothing; after re-authenticating it signs', async () => {
    ageLastPasswordEntry('user-data-manager', 10);
    const [locks, signatures, audit] = [count('data_locks'), count('signatures'), count('audit_events')];
    const refused = await lock({ scope: 'site', scopeId: '101', reason: 'Site 101 cleaned' });
    expect(refused.status).toBe(401);
    expect(refused.body.error.code).toBe('reauthentication-required');
    expect(refused.body.error.message).toMatch(/10 minutes ago.*Nothing was signed/);
    expect([count('data_locks'), count('signatures'), count('audit_events')]).toEqual([locks, signatures, audit]);

    const returnTo = '/data-office/locks?scope=site&target=101&reason=Site%20101%20cleaned&pending=lock';
    const landed = await reauthenticate(dataManager, 'data.manager@tidemark.example', returnTo);
    const back = new URL(landed, tidemark.url);
    expect(back.pathname).toBe('/data-office/locks');
    expect(Object.fromEntries(back.searchParams)).toEqual({
      scope: 'site',
      target: '101',
      reason: 'Site 101 cleaned',
      pending: 'lock',
      reauthentication: 'confirmed',
    });
    const locked = await lock({ scope: 'site', scopeId: '101', reason: 'Site 101 cleaned' });
    expect(locked.status).toBe(201);

    ageLastPasswordEntry('user-data-manager', 6);
    const unlockRefused = await unlock(locked.body.id, 'Reopened');
    expect(unlockRefused.status).toBe(401);
    expect(unlockRefused.body.error.code).toBe('reauthentication-required');
    expect((await call<LockList>(dataManager, 'GET', studyPath('/locks'))).body.active.map((view) => view.id)).toContain(locked.body.id);
    await reauthenticate(dataManager, 'data.manager@tidemark.example', '/data-office/locks');
    expect((await unlock(locked.body.id, 'Reopened')).status).toBe(200);
  });

  it('does not let an API token sign a lock: no person entered a password', async () => {
    const created = await call<{ token: string }>(dataManager, 'POST', '/api/me/tokens', { label: 'lock automation' });
    expect(created.status).toBe(201);
    const response = await fetch(`${tidemark.url}${studyPath('/locks')}`, {
      method: 'POST',
      headers: { 'content-type': 'application/json', authorization: `Bearer ${created.body.token}` },
      body: JSON.stringify({ scope: 'study', reason: 'Scripted lock' }),
    });
    expect(response.status).toBe(401);
    expect(((await response.json()) as ErrorBody).error.code).toBe('reauthentication-required');
  });

  it('refuses to unlock a lock twice (409 lock-not-active) and an unknown lock (404)', async () => {
    const locked = await lock({ scope: 'visit', scopeId: 'V5', reason: 'Week 24 frozen' });
    expect((await unlock(locked.body.id, 'Reopened')).status).toBe(200);
    const again = await unlock(locked.body.id, 'Reopened again');
    expect(again.status).toBe(409);
    expect(again.body.error.code).toBe('lock-not-active');
    expect((await unlock('no-such-lock', 'Reopened')).status).toBe(404);
  });
});

describe('signatures bound to their lock', () => {
  it('shows a signature replayed from lock A onto lock B as not valid, and B as not validly signed', async () => {
    const a = (await lock({ scope: 'subject', scopeId: '301-001', reason: 'Subject completed' })).body;
    const b = (await lock({ scope: 'subject', scopeId: '301-002', reason: 'Subject withdrew consent' })).body;
    const signatureOfA = db()
      .prepare(`select * from signatures where record_type = 'lock' and record_id = ? and meaning = 'locked'`)
      .get(a.id) as Record<string, unknown>;
    db()
      .prepare(
        `insert into signatures (id, user_id, printed_name, meaning, signed_at, record_type, record_id, content_hash, auth_time, method)
         values (@replayId, @user_id, @printed_name, @meaning, @signed_at, @record_type, @recordB, @content_hash, @auth_time, @method)`,
      )
      .run({ ...signatureOfA, replayId: 'replayed-signature', recordB: b.id });

    const list = (await call<LockList>(dataManager, 'GET', studyPath('/locks'))).body;
    const viewB = list.active.find((view) => view.id === b.id)!;
    expect(viewB.signaturesValid).toBe(false);
    expect(viewB.signatures.map((s) => s.valid).sort()).toEqual([false, true]);
    expect(list.active.find((view) => view.id === a.id)!.signaturesValid).toBe(true);

    // The same check straight through the signature service: A's signature with B's content.
    const stored = (id: string) => db().prepare('select * from data_locks where id = ?').get(id) as Record<string, string | null>;
    const asRecord = (row: Record<string, string | null>) => ({
      id: row['id']!,
      studyId: row['study_id']!,
      scope: row['scope'] as 'subject',
      scopeId: row['scope_id']!,
      reason: row['reason']!,
      lockedBy: row['locked_by']!,
      lockedAt: row['locked_at']!,
      unlockedBy: row['unlocked_by'],
      unlockedAt: row['unlocked_at'],
      unlockReason: row['unlock_reason'],
    });
    const signatureId = signatureOfA['id'] as string;
    expect(tidemark.services.signatures.manifestation(signatureId, lockedContent(asRecord(stored(a.id)))).valid).toBe(true);
    expect(tidemark.services.signatures.manifestation(signatureId, lockedContent(asRecord(stored(b.id)))).valid).toBe(false);

    for (const view of [a, b]) expect((await unlock(view.id, 'Locked for the test only')).status).toBe(200);
  });

  it('shows a lock whose reason was edited in the database as no longer validly signed', async () => {
    const locked = (await lock({ scope: 'subject', scopeId: '301-003', reason: 'Subject completed the study' })).body;
    db().prepare('update data_locks set reason = ? where id = ?').run('Edited behind the application', locked.id);
    const view = (await call<LockList>(dataManager, 'GET', studyPath('/locks'))).body.active.find((item) => item.id === locked.id)!;
    expect(view.reason).toBe('Edited behind the application');
    expect(view.signatures).toEqual([expect.objectContaining({ meaning: 'locked', valid: false })]);
    expect(view.signaturesValid).toBe(false);
    expect((await unlock(locked.id, 'Locked for the test only')).status).toBe(200);
  });
});

describe('the list', () => {
  it('shows active locks and past ones newest first, with who, when, why and the signatures; the audit chain verifies', async () => {
    const active = (await lock({ scope: 'visit', scopeId: 'SCR', reason: 'Screening data frozen' })).body;
    const list = await call<LockList>(monitor, 'GET', studyPath('/locks'));
    expect(list.status).toBe(200);
    expect(list.body.active.map((view) => view.id)).toEqual([active.id]);
    expect(list.body.past.length).toBeGreaterThanOrEqual(8);
    const lockedTimes = list.body.past.map((view) => view.lockedAt);
    expect([...lockedTimes].sort().reverse()).toEqual(lockedTimes);
    for (const view of list.body.past) {
      expect(view.unlockedAt).toEqual(expect.any(String));
      expect(view.unlockReason).toEqual(expect.any(String));
      expect(view.signatures.map((s) => s.meaning)).toEqual(expect.arrayContaining(['locked', 'unlocked']));
    }
    expect(tidemark.services.audit.verify()).toMatchObject({ ok: true, firstBreak: null });
    expect((await unlock(active.id, 'Locked for the test only')).status).toBe(200);
  });
});
