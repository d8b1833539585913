/**
 * Every write to locked data is refused: the real app, a real SQLite file, the S3 fake, the
 * identity provider and the SMTP catcher on loopback. The OpenAPI document lists the mutating
 * routes under /api/studies/{studyId}; each is classified below as touching clinical data (it
 * must answer 409 `locked` with the lock's reason) or as administration a lock does not freeze,
 * with the reason. A route added without a classification fails the first test.
 *
 * The rule (ours, issue 7): a lock freezes clinical data — subjects, sessions, files, efforts,
 * reads, query threads and calibration checks — and stops new clinical data entering the locked
 * scope. It does not freeze the administration of the study (people, roles, site details,
 * settings, schedule, reference equations): those changes are audited with a reason once the
 * study has data, and none of them changes a stored clinical value.
 */
import { createHash, randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { strToU8 } from 'fflate';
import type { LockView } from '../../shared/contracts/locks.js';
import type { Query, QueuePage, ReadWorkspace } from '../../shared/contracts/reading.js';
import type { Schedule } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { QueueTokens } from '../../server/reading/queue-token.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };
type ErrorBody = { error: { code: string; message: string; details?: Record<string, unknown> } };

/** The ids the calls below write to, prepared before anything is locked. */
interface Fixture {
  /** Site of the rejected session, and the coordinator who works there. */
  siteId: string;
  coordinator: Caller;
  /** A subject enrolled at that site with no session yet, for registration. */
  newSubjectCode: string;
  /** A session whose file was rejected: correctable, re-uploadable, its file reprocessable. */
  rejectedSessionId: string;
  rejectedUploadId: string;
  /** A closed query on the rejected session (a lock needs every query in scope closed). */
  closedQueryId: string;
  /** Reader one's read in progress, and the session it reads. */
  read: ReadWorkspace;
  readSessionId: string;
  /** A queue token of reader one for another session. */
  claimToken: string;
  claimSessionId: string;
  /** The adjudicator's queue token for a session whose two reads disagree. */
  adjudicationToken: string;
  adjudicationSessionId: string;
}

/** Which fixture session a session-level route writes to, for the session-lock round. */
type FixtureSession = 'rejectedSessionId' | 'readSessionId' | 'claimSessionId' | 'adjudicationSessionId';

type Classification =
  | {
      readonly kind: 'clinical';
      /** Why a lock must freeze it. */
      readonly why: string;
      /** The session it writes to; absent for writes above a session (enrolment, registration, calibration). */
      readonly session?: FixtureSession;
      /** Set where the refusal deliberately leaves the lock's reason out, with the reason why. */
      readonly reasonWithheld?: string;
      readonly call: (fixture: Fixture) => Promise<Response>;
    }
  | { readonly kind: 'administrative'; readonly why: string };

let tidemark: Running;
let dataManager: Caller;
let readerOne: Caller;
let adjudicator: Caller;
let fixture: Fixture;
const studyUrl = (rest: string) => `${tidemark.url}/api/studies/${DEMO_STUDY.id}${rest}`;
const db = () => tidemark.deps.db.$client;

function send(caller: Caller, method: string, rest: string, body?: unknown): Promise<Response> {
  return caller.client.fetch(studyUrl(rest), {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
}

async function json<T>(response: Response, status: number): Promise<T> {
  const text = await response.text();
  if (response.status !== status) throw new Error(`Expected ${status}, got ${response.status}: ${text}`);
  return JSON.parse(text) as T;
}

/** A clean three-effort session document (demo data from the engine's seeded generator). */
function sessionDocument(seed: number): Uint8Array {
  const efforts = generateSession({ efforts: 3, base: { fvcL: 3.1, pefLPerS: 6.2 } }, seed).map((effort) => recordingToSessionEffort(effort.recording));
  return strToU8(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts }));
}

const ROUTES: Record<string, Classification> = {
  'POST /api/studies/{studyId}/sites/{siteId}/subjects': {
    kind: 'clinical',
    why: 'enrols a subject: new clinical data at the site',
    call: (f) => send(f.coordinator, 'POST', `/sites/${f.siteId}/subjects`, { code: 'LW-900' }),
  },
  'POST /api/studies/{studyId}/sites/{siteId}/sessions': {
    kind: 'clinical',
    why: 'registers a session for a subject at a visit: new clinical data',
    call: (f) =>
      send(f.coordinator, 'POST', `/sites/${f.siteId}/sessions`, {
        subjectCode: f.newSubjectCode,
        visitCode: 'SCR',
        timepointCode: 'PRE-DOSE',
        bronchodilator: 'pre',
        testedAt: '2026-06-01T09:30:00+02:00',
        demographics: { ageYears: 60, heightCm: 170, weightKg: 75, sex: 'female' },
        technicianCode: 'TECH-07',
      }),
  },
  'PATCH /api/studies/{studyId}/sessions/{sessionId}': {
    kind: 'clinical',
    why: 'corrects registration data (demographics, times, technician) of a session',
    session: 'rejectedSessionId',
    call: (f) => send(f.coordinator, 'PATCH', `/sessions/${f.rejectedSessionId}`, { technicianCode: 'TECH-99', reason: 'technician code typed wrong' }),
  },
  'POST /api/studies/{studyId}/sessions/{sessionId}/uploads': {
    kind: 'clinical',
    why: "stores a new file for a session and replaces its efforts and checks",
    session: 'rejectedSessionId',
    call: (f) => {
      const form = new FormData();
      form.append('file', new Blob([sessionDocument(77)], { type: 'application/json' }), 'late-file.json');
      return f.coordinator.client.fetch(studyUrl(`/sessions/${f.rejectedSessionId}/uploads`), {
        method: 'POST',
        headers: { 'x-csrf-token': f.coordinator.csrfToken },
        body: form,
      });
    },
  },
  'POST /api/studies/{studyId}/sessions/{sessionId}/uploads/{uploadId}/reprocess': {
    kind: 'clinical',
    why: "runs the check again on a stored file and may change the session's efforts and status",
    session: 'rejectedSessionId',
    call: (f) => send(f.coordinator, 'POST', `/sessions/${f.rejectedSessionId}/uploads/${f.rejectedUploadId}/reprocess`),
  },
  'POST /api/studies/{studyId}/sites/{siteId}/calibration-checks': {
    kind: 'clinical',
    why: "logs a calibration check: the quality record behind the site's sessions",
    call: (f) =>
      send(f.coordinator, 'POST', `/sites/${f.siteId}/calibration-checks`, {
        deviceSerialNumber: 'SN-LOCK-1',
        syringeVolumeL: 3,
        measuredVolumeL: 3.02,
        checkedAt: '2026-06-01T08:00:00+02:00',
      }),
  },
  'POST /api/studies/{studyId}/reads/{readId}/queries': {
    kind: 'clinical',
    why: 'opens a query on the session behind a read: a new thread on clinical data, and it would block the lock',
    session: 'readSessionId',
    reasonWithheld:
      'reader-facing and blinded (server/queries/query-service.ts assertWritable): the refusal names the lock scope and time only, ' +
      'as a free-text reason may name a subject',
    call: (f) => send(readerOne, 'POST', `/reads/${f.read.readId}/queries`, { question: 'Was effort 2 cut short by a cough?', requestRepeat: false }),
  },
  'POST /api/studies/{studyId}/sessions/{sessionId}/queries': {
    kind: 'clinical',
    why: 'opens a query on a session: a new thread on clinical data',
    session: 'rejectedSessionId',
    call: (f) => send(dataManager, 'POST', `/sessions/${f.rejectedSessionId}/queries`, { question: 'Please confirm the height at this visit.', requestRepeat: false }),
  },
  'POST /api/studies/{studyId}/queries/{queryId}/answers': {
    kind: 'clinical',
    why: "adds the site's answer to a query on a session",
    session: 'rejectedSessionId',
    call: (f) => send(f.coordinator, 'POST', `/queries/${f.closedQueryId}/answers`, { body: 'Height re-measured: 170 cm.' }),
  },
  'POST /api/studies/{studyId}/queries/{queryId}/messages': {
    kind: 'clinical',
    why: 'writes again on a query on a session and reopens it',
    session: 'rejectedSessionId',
    call: (f) => send(dataManager, 'POST', `/queries/${f.closedQueryId}/messages`, { body: 'One more question on this session.' }),
  },
  'POST /api/studies/{studyId}/queries/{queryId}/close': {
    kind: 'administrative',
    why:
      'closes a query thread without changing session data; a lock needs every query in its scope closed already, ' +
      'so on locked data it only meets closed queries (server/queries/query-service.ts close)',
  },
  'POST /api/studies/{studyId}/reading/claims': {
    kind: 'clinical',
    why: 'opens a read of a session with verdicts pre-filled, and moves the session into reading',
    session: 'claimSessionId',
    call: (f) => send(readerOne, 'POST', '/reading/claims', { queueToken: f.claimToken }),
  },
  'PUT /api/studies/{studyId}/reads/{readId}': {
    kind: 'clinical',
    why: "saves a reader's verdicts on a session's efforts",
    session: 'readSessionId',
    call: (f) => send(readerOne, 'PUT', `/reads/${f.read.readId}`, { version: f.read.version, verdicts: f.read.verdicts, feedbackText: 'Good efforts.' }),
  },
  'POST /api/studies/{studyId}/reads/{readId}/release': {
    kind: 'clinical',
    why: 'withdraws a read and returns the session to the queue (changes the session status)',
    session: 'readSessionId',
    call: (f) => send(readerOne, 'POST', `/reads/${f.read.readId}/release`),
  },
  'POST /api/studies/{studyId}/reads/{readId}/sign': {
    kind: 'clinical',
    why: 'signs a read; a signed read can make the session final',
    session: 'readSessionId',
    call: (f) => send(readerOne, 'POST', `/reads/${f.read.readId}/sign`, { version: f.read.version, meaning: 'authored' }),
  },
  'POST /api/studies/{studyId}/adjudication/claims': {
    kind: 'clinical',
    why: 'opens the adjudication read that decides a session',
    session: 'adjudicationSessionId',
    call: (f) => send(adjudicator, 'POST', '/adjudication/claims', { queueToken: f.adjudicationToken }),
  },
  'POST /api/studies/{studyId}/sites': {
    kind: 'administrative',
    why: 'adds a site: an empty container, no clinical data; a study lock still refuses subjects and sessions there',
  },
  'PUT /api/studies/{studyId}/sites/{siteId}': {
    kind: 'administrative',
    why: "changes a site's name, country or time zone; sessions keep their own stored time zone",
  },
  'DELETE /api/studies/{studyId}/sites/{siteId}': {
    kind: 'administrative',
    why: 'removes only a site that holds no subjects, sessions or calibration checks (server/setup/site-setup-service.ts)',
  },
  'PUT /api/studies/{studyId}/schedule': {
    kind: 'administrative',
    why: 'edits the visit schedule; visits in use cannot be removed, and no session row changes',
  },
  'PUT /api/studies/{studyId}/setup': {
    kind: 'administrative',
    why: 'study settings (rule set, read design, blinding, turnaround) apply to work from now on; stored checks and signed reads keep their values',
  },
  'PUT /api/studies/{studyId}/reference-set': {
    kind: 'administrative',
    why: 'pins reference equations for the study; no stored session value changes, and the change is audited with a reason',
  },
  'POST /api/studies/{studyId}/replays': {
    kind: 'administrative',
    why: 'replays stored files under another rule set and reports differences; writes nothing to sessions or reads',
  },
  'POST /api/studies/{studyId}/people': { kind: 'administrative', why: 'gives a person a role: administration of people' },
  'DELETE /api/studies/{studyId}/people/{userId}/roles/{role}': { kind: 'administrative', why: "removes a person's role: administration of people" },
  'POST /api/studies/{studyId}/people/{userId}/deactivate': { kind: 'administrative', why: 'deactivates an account: administration of people' },
  'POST /api/studies/{studyId}/audit/verify': { kind: 'administrative', why: 'verifies the audit chain; changes no data' },
  'POST /api/studies/{studyId}/locks': { kind: 'administrative', why: 'the lock itself: locking inside a locked study adds a narrower lock' },
  'POST /api/studies/{studyId}/locks/{lockId}/unlock': { kind: 'administrative', why: 'the unlock itself, with a reason and a signature' },
  'POST /api/studies/{studyId}/releases': {
    kind: 'administrative',
    why: 'releases a dataset built from locked data only; writes release files to storage, never to clinical tables',
  },
};

const CLINICAL = Object.entries(ROUTES).flatMap(([route, classification]) =>
  classification.kind === 'clinical' ? [{ route, ...classification }] : [],
);

/** Tables that hold sign-in bookkeeping only; every other table must not change when a write is refused. */
const SIGN_IN_TABLES = new Set(['auth_sessions', 'login_attempts', 'api_tokens', '__drizzle_migrations', 'sqlite_sequence']);

/** A fingerprint of every table's rows (except sign-in bookkeeping) and of the stored objects. */
async function dataFingerprint(): Promise<Record<string, string>> {
  // E-mails of earlier steps are still being sent and mark their rows when done.
  await tidemark.services.messages.settle();
  const tables = db()
    .prepare(`select name from sqlite_master where type = 'table' and name not like 'sqlite_%' order by name`)
    .pluck()
    .all() as string[];
  const fingerprint: Record<string, string> = {};
  for (const table of tables.filter((name) => !SIGN_IN_TABLES.has(name))) {
    const rows = db().prepare(`select * from "${table}" order by rowid`).raw().all();
    fingerprint[table] = `${rows.length} rows, ${createHash('sha256').update(JSON.stringify(rows)).digest('hex').slice(0, 16)}`;
  }
  const keys: string[] = [];
  for await (const key of tidemark.deps.storage.keys('')) keys.push(key);
  fingerprint['storage'] = `${keys.length} objects, ${createHash('sha256').update(keys.sort().join('\n')).digest('hex').slice(0, 16)}`;
  return fingerprint;
}

/** The data manager has just entered the password again (the signature needs it within 5 minutes). */
function freshPasswordEntry(): void {
  db().prepare('update auth_sessions set auth_time = ? where user_id = ? and ended_at is null').run(new Date().toISOString(), 'user-data-manager');
}

async function lock(body: Record<string, unknown>): Promise<LockView> {
  freshPasswordEntry();
  return json<LockView>(await send(dataManager, 'POST', '/locks', body), 201);
}

async function unlock(lockId: string): Promise<void> {
  freshPasswordEntry();
  await json<LockView>(await send(dataManager, 'POST', `/locks/${lockId}/unlock`, { reason: 'Round of the locked-writes test over' }), 200);
}

async function expectRefused(entry: (typeof CLINICAL)[number], reason: string): Promise<void> {
  const before = await dataFingerprint();
  const response = await entry.call(fixture);
  const body = (await response.json()) as ErrorBody;
  expect({ status: response.status, code: body.error?.code }).toEqual({ status: 409, code: 'locked' });
  expect(body.error.message).toMatch(/is locked \((study|site|subject|visit|session) lock since /);
  if (!entry.reasonWithheld) expect(body.error.message).toContain(reason);
  expect(await dataFingerprint()).toEqual(before);
}

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  let coordinator: Caller;
  [dataManager, readerOne, adjudicator, coordinator] = await Promise.all(
    ['data.manager@tidemark.example', 'reader.one@tidemark.example', 'adjudicator@tidemark.example', 'coordinator.101@tidemark.example'].map(
      (email) => signIn(tidemark.url, email),
    ),
  );
  const schedule = await json<Schedule>(await send(dataManager, 'GET', '/schedule'), 200);
  expect(schedule.visits.map((visit) => visit.code)).toContain('SCR');
  expect(schedule.timepoints.map((timepoint) => timepoint.code)).toContain('PRE-DOSE');

  // A session whose file was rejected (a flat line, no forced blow), registered at site 101 for this test.
  const siteId = 'site-101';
  const registration = (subjectCode: string) => ({
    subjectCode,
    visitCode: 'SCR',
    timepointCode: 'PRE-DOSE',
    bronchodilator: 'pre',
    testedAt: '2026-06-01T09:30:00+02:00',
    demographics: { ageYears: 60, heightCm: 170, weightKg: 75, sex: 'female' },
    technicianCode: 'TECH-07',
  });
  await json(await send(coordinator, 'POST', `/sites/${siteId}/subjects`, { code: 'LW-002' }), 201);
  const registered = await json<{ id: string }>(await send(coordinator, 'POST', `/sites/${siteId}/sessions`, registration('LW-002')), 201);
  const flatCsv = ['time_s,volume_l', ...Array.from({ length: 400 }, (_, i) => `${(i / 100).toFixed(2)},0.000000`)].join('\n');
  const form = new FormData();
  form.append('file', new Blob([strToU8(flatCsv)], { type: 'text/csv' }), 'flat.csv');
  const refusedFile = await coordinator.client.fetch(studyUrl(`/sessions/${registered.id}/uploads`), {
    method: 'POST',
    headers: { 'x-csrf-token': coordinator.csrfToken },
    body: form,
  });
  const rejected = { id: registered.id, siteId, uploadId: (await json<ErrorBody>(refusedFile, 422)).error.details!['uploadId'] as string };

  const newSubjectCode = 'LW-001';
  await json(await send(coordinator, 'POST', `/sites/${siteId}/subjects`, { code: newSubjectCode }), 201);

  const query = await json<Query>(
    await send(dataManager, 'POST', `/sessions/${rejected.id}/queries`, { question: 'Why was the file rejected twice?', requestRepeat: false }),
    201,
  );
  await json(await send(coordinator, 'POST', `/queries/${query.id}/answers`, { body: 'The site spirometer was set to 50 Hz.' }), 201);
  await json(await send(dataManager, 'POST', `/queries/${query.id}/close`), 200);

  // A dual-read session whose two signed reads disagree, made directly in the database: only its place in the adjudication queue matters here.
  const disputed = db()
    .prepare(`select id, current_upload_id as uploadId from test_sessions where study_id = ? and status = 'checked' order by id desc limit 1`)
    .get(DEMO_STUDY.id) as { id: string; uploadId: string };
  const now = new Date().toISOString();
  db().prepare(`update test_sessions set status = 'adjudication', dual_read = 1 where id = ?`).run(disputed.id);
  for (const [kind, readerId] of [
    ['first', 'user-reader-1'],
    ['second', 'user-reader-2'],
  ]) {
    db()
      .prepare(
        `insert into reads (id, study_id, session_id, upload_id, reader_id, kind, blind_code, status, version, claimed_at, due_at, updated_at, signed_at)
         values (?, ?, ?, ?, ?, ?, ?, 'signed', 2, ?, ?, ?, ?)`,
      )
      .run(randomUUID(), DEMO_STUDY.id, disputed.id, disputed.uploadId, readerId, kind, `LW-${kind}`, now, now, now, now);
  }
  const adjudicationQueue = await json<QueuePage>(await send(adjudicator, 'GET', '/adjudication/queue'), 200);
  expect(adjudicationQueue.items).toHaveLength(1);

  const queue = await json<QueuePage>(await send(readerOne, 'GET', '/reading/queue'), 200);
  expect(queue.items.length).toBeGreaterThanOrEqual(2);
  const read = await json<ReadWorkspace>(await send(readerOne, 'POST', '/reading/claims', { queueToken: queue.items[0].queueToken }), 201);
  const readSessionId = db().prepare('select session_id from reads where id = ?').pluck().get(read.readId) as string;
  // Test-side only: which session the next token names, so the session round can lock exactly it.
  const tokens = new QueueTokens(tidemark.dataDir);
  const checkedIds = db().prepare(`select id from test_sessions where study_id = ? and status = 'checked'`).pluck().all(DEMO_STUDY.id) as string[];
  const claimSessionId = checkedIds.find((id) => tokens.tokenFor('user-reader-1', id) === queue.items[1].queueToken)!;
  expect(claimSessionId).toBeDefined();

  fixture = {
    siteId: rejected.siteId,
    coordinator,
    newSubjectCode,
    rejectedSessionId: rejected.id,
    rejectedUploadId: rejected.uploadId,
    closedQueryId: query.id,
    read,
    readSessionId,
    claimToken: queue.items[1].queueToken,
    claimSessionId,
    adjudicationToken: adjudicationQueue.items[0].queueToken,
    adjudicationSessionId: disputed.id,
  };
});

afterAll(async () => {
  await tidemark?.close();
});

describe('the classification', () => {
  it('names every mutating route under /api/studies/{studyId} of the OpenAPI document, each with its reason', async () => {
    const document = (await (await fetch(`${tidemark.url}/api/openapi.json`)).json()) as { paths: Record<string, Record<string, unknown>> };
    const mutating = Object.entries(document.paths).flatMap(([path, operations]) =>
      Object.keys(operations)
        .filter((method) => ['post', 'put', 'patch', 'delete'].includes(method))
        .map((method) => `${method.toUpperCase()} ${path}`),
    );
    const studyRoutes = mutating.filter((route) => route.split(' ')[1].startsWith('/api/studies/{studyId}/'));
    expect(studyRoutes.length).toBeGreaterThan(20);
    expect(studyRoutes.filter((route) => !(route in ROUTES))).toEqual([]);
    for (const entry of CLINICAL) expect(mutating).toContain(entry.route);
    for (const classification of Object.values(ROUTES)) expect(classification.why.length).toBeGreaterThan(20);
  });
});

describe('under a lock of the whole study', () => {
  const reason = 'Database lock for the primary analysis (fictional)';
  let studyLock: LockView;
  let auditRowsAfterLock: number;

  beforeAll(async () => {
    studyLock = await lock({ scope: 'study', reason });
    auditRowsAfterLock = db().prepare('select count(*) from audit_events').pluck().get() as number;
  });
  afterAll(async () => {
    await unlock(studyLock.id);
  });

  it.each(CLINICAL.map((entry) => [entry.route, entry] as const))('%s answers 409 locked with the reason and changes nothing', async (_route, entry) => {
    await expectRefused(entry, reason);
  });

  it('wrote no audit row for the refused writes: the lock is the last event', () => {
    expect(db().prepare('select count(*) from audit_events').pluck().get()).toBe(auditRowsAfterLock);
    expect(db().prepare('select entity, action from audit_events order by sequence desc limit 1').get()).toEqual({ entity: 'lock', action: 'lock' });
  });
});

describe('under a lock of one session', () => {
  const sessionEntries = CLINICAL.filter((entry) => entry.session !== undefined);

  it.each(sessionEntries.map((entry) => [entry.route, entry] as const))(
    '%s answers 409 locked for the locked session and changes nothing',
    async (_route, entry) => {
      const reason = `Session frozen after source data verification (${entry.route.split(' ')[0]})`;
      const sessionLock = await lock({ scope: 'session', scopeId: fixture[entry.session!], reason });
      const auditRows = db().prepare('select count(*) from audit_events').pluck().get();
      try {
        await expectRefused(entry, reason);
        expect(db().prepare('select count(*) from audit_events').pluck().get()).toBe(auditRows);
      } finally {
        // The next route's round needs this session unlocked, whatever happened here.
        await unlock(sessionLock.id);
      }
    },
  );

  it('leaves other sessions writable: a correction of another session goes through', async () => {
    const sessionLock = await lock({ scope: 'session', scopeId: fixture.readSessionId, reason: 'Only this session is frozen' });
    const response = await send(fixture.coordinator, 'PATCH', `/sessions/${fixture.rejectedSessionId}`, { technicianCode: 'TECH-31', reason: 'typo' });
    expect(response.status).toBe(200);
    await unlock(sessionLock.id);
  });
});
