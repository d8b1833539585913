/**
 * The monitor's view end to end: the audit trail with its filters, paging and access rules,
 * blinding, chain verification (including a tampered row with the triggers dropped), and the site
 * and reader performance figures checked against a hand count on a small study built here.
 *
 * Sessions and files go through the real API. Reads, queries and session outcomes that other
 * parts of the app produce (reading room, queries, feedback release) are written straight into
 * this test's own database, with verdicts and times chosen so that every figure can be counted
 * by hand; the counts are written out beside the expectations.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import Sqlite from 'better-sqlite3';
import ExcelJS from 'exceljs';
import { strToU8 } from 'fflate';
import type { AuditPage, ChainVerificationResult, ReaderPerformanceReport, SitePerformanceReport } from '../../shared/contracts/oversight.js';
import { PERFORMANCE_CAUTION } from '../../shared/contracts/oversight.js';
import type { Schedule, SessionDetail } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { effortToCsv, generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { WITHHELD_VALUE } from '../../server/oversight/blinding-redaction.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Person = { client: CookieClient; csrfToken: string };

let now = new Date('2026-11-02T08:00:00.000Z');
let tidemark: Running;
let schedule: Schedule;
const people: Record<'monitor' | 'dataManager' | 'admin' | 'reader' | 'coordinator101' | 'coordinator102', Person> = {} as never;
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
const db = () => tidemark.deps.db.$client;
const hours = (h: number) => h * 3_600_000;
let subjectCounter = 0;

/** Session ids by the names used in the hand count below. */
const sessions: Record<string, SessionDetail> = {};

function send(person: Person, method: string, url: string, body?: unknown) {
  return person.client.fetch(url, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': person.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
}

async function getJson<T>(person: Person, pathAndQuery: string): Promise<T> {
  const response = await person.client.fetch(`${studyUrl()}${pathAndQuery}`);
  expect({ url: pathAndQuery, status: response.status }).toEqual({ url: pathAndQuery, status: 200 });
  return (await response.json()) as T;
}

async function registerSession(coordinator: Person, siteId: string): Promise<SessionDetail> {
  const subjectCode = `O${siteId.slice(-3)}-${String(++subjectCounter).padStart(3, '0')}`;
  expect((await send(coordinator, 'POST', `${studyUrl()}/sites/${siteId}/subjects`, { code: subjectCode })).status).toBe(201);
  const response = await send(coordinator, 'POST', `${studyUrl()}/sites/${siteId}/sessions`, {
    subjectCode,
    visitCode: schedule.visits[0].code,
    timepointCode: schedule.timepoints[0].code,
    bronchodilator: 'pre',
    testedAt: '2026-11-01T09:30:00+01:00',
    demographics: { ageYears: 61, heightCm: 172, weightKg: 80, sex: 'male' },
    technicianCode: 'TECH-07',
  });
  expect(response.status).toBe(201);
  return (await response.json()) as SessionDetail;
}

function upload(coordinator: Person, sessionId: string, name: string, bytes: Uint8Array) {
  const form = new FormData();
  form.append('file', new Blob([bytes]), name);
  return coordinator.client.fetch(`${studyUrl()}/sessions/${sessionId}/uploads`, {
    method: 'POST',
    headers: { 'x-csrf-token': coordinator.csrfToken },
    body: form,
  });
}

/** A clean three-effort session document; the seed makes each file unique. */
function sessionJson(seed: number): Uint8Array {
  const efforts = generateSession({ efforts: 3, base: { fvcL: 3.2, pefLPerS: 6.5 } }, seed).map((effort) => recordingToSessionEffort(effort.recording));
  return strToU8(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts }));
}

/** Registers a session and uploads a clean file to it at `at`. */
async function checkedSession(name: string, coordinator: Person, siteId: string, at: string, seed: number): Promise<void> {
  now = new Date(at);
  const session = await registerSession(coordinator, siteId);
  expect((await upload(coordinator, session.id, `${name}.json`, sessionJson(seed))).status).toBe(201);
  sessions[name] = session;
}

const A = 'acceptable';
const U = 'usable';
const N = 'not_acceptable';
type V = typeof A | typeof U | typeof N;

function currentUploadOf(sessionId: string): { id: string; receivedAt: string } {
  return db()
    .prepare(
      `select u.id, u.received_at as receivedAt from test_sessions s join uploads u on u.id = s.current_upload_id where s.id = ?`,
    )
    .get(sessionId) as { id: string; receivedAt: string };
}

/** Sets the engine's suggested verdicts of a session's three efforts (FEV1 and FVC per effort). */
function setSuggestions(session: string, fev1: V[], fvc: V[]): void {
  const uploadId = currentUploadOf(sessions[session].id).id;
  const update = db().prepare(`update efforts set suggested_fev1_verdict = ?, suggested_fvc_verdict = ? where upload_id = ? and effort_index = ?`);
  fev1.forEach((verdict, index) => update.run(verdict, fvc[index], uploadId, index));
}

/** Writes a read with its verdicts, as the reading room would store it. */
function insertRead(read: {
  id: string;
  session: string;
  readerId: string;
  kind: 'first' | 'second' | 'adjudication';
  status: 'signed' | 'in-progress';
  claimedAt: string;
  minutes?: number;
  fev1: V[];
  fvc: V[];
  grades?: [string, string];
}): void {
  const sessionId = sessions[read.session].id;
  const uploadId = currentUploadOf(sessionId).id;
  const signedAt = read.minutes === undefined ? null : new Date(Date.parse(read.claimedAt) + read.minutes * 60_000).toISOString();
  db()
    .prepare(
      `insert into reads (id, study_id, session_id, upload_id, reader_id, kind, blind_code, status, version, claimed_at, due_at,
                          updated_at, result_json, signed_at)
       values (?, ?, ?, ?, ?, ?, ?, ?, 1, ?, ?, ?, ?, ?)`,
    )
    .run(
      read.id,
      DEMO_STUDY.id,
      sessionId,
      uploadId,
      read.readerId,
      read.kind,
      `BLIND-${read.id}`,
      read.status,
      read.claimedAt,
      read.claimedAt,
      read.claimedAt,
      read.grades ? JSON.stringify({ fev1Grade: read.grades[0], fvcGrade: read.grades[1] }) : null,
      signedAt,
    );
  const suggestions = db()
    .prepare(`select effort_index as i, suggested_fev1_verdict as f, suggested_fvc_verdict as v from efforts where upload_id = ? order by effort_index`)
    .all(uploadId) as { i: number; f: string; v: string }[];
  for (const effort of suggestions) {
    db()
      .prepare(
        `insert into read_verdicts (read_id, effort_id, effort_index, fev1_verdict, fvc_verdict, suggested_fev1_verdict, suggested_fvc_verdict)
         values (?, ?, ?, ?, ?, ?, ?)`,
      )
      .run(read.id, `${uploadId}:${effort.i}`, effort.i, read.fev1[effort.i], read.fvc[effort.i], effort.f, effort.v);
  }
}

/** Marks a session final with its feedback released `turnaroundHours` after its current file arrived. */
function releaseFeedback(session: string, turnaroundHours: number): void {
  const sessionId = sessions[session].id;
  const releasedAt = new Date(Date.parse(currentUploadOf(sessionId).receivedAt) + hours(turnaroundHours)).toISOString();
  db().prepare(`update test_sessions set status = 'final', feedback_released_at = ? where id = ?`).run(releasedAt, sessionId);
}

function insertQuery(id: string, session: string, status: 'open' | 'answered' | 'closed', openedDaysAgo: number): void {
  const s = sessions[session];
  db()
    .prepare(
      `insert into queries (id, study_id, site_id, session_id, opened_by, opened_role, question, status, opened_at)
       values (?, ?, ?, ?, 'user-data-manager', 'data-manager', 'Please check the technician code.', ?, ?)`,
    )
    .run(id, DEMO_STUDY.id, s.siteId, s.id, status, new Date(now.getTime() - openedDaysAgo * 86_400_000).toISOString());
}

beforeAll(async () => {
  // The test's clock runs over nine days; sign-ins must outlast it.
  tidemark = await startTidemarkForTest(
    { TIDEMARK_SEED_DEMO_SESSIONS: 'false', TIDEMARK_SESSION_IDLE_MINUTES: '100000', TIDEMARK_SESSION_MAX_HOURS: '1000' },
    { clock: () => now },
  );
  const emails = {
    monitor: 'monitor@tidemark.example',
    dataManager: 'data.manager@tidemark.example',
    admin: 'admin@tidemark.example',
    reader: 'reader.one@tidemark.example',
    coordinator101: 'coordinator.101@tidemark.example',
    coordinator102: 'coordinator.102@tidemark.example',
  } as const;
  for (const [key, email] of Object.entries(emails)) {
    const { client, csrfToken } = await signIn(tidemark.url, email);
    people[key as keyof typeof emails] = { client, csrfToken };
  }
  schedule = (await (await people.coordinator101.client.fetch(`${studyUrl()}/schedule`)).json()) as Schedule;

  // Site 101: S1, S2, S6, S7 checked; S3's only file rejected; S4 waits for its file.
  await checkedSession('S1', people.coordinator101, 'site-101', '2026-11-02T08:00:00.000Z', 101);
  await checkedSession('S2', people.coordinator101, 'site-101', '2026-11-02T09:00:00.000Z', 102);
  now = new Date('2026-11-02T10:00:00.000Z');
  sessions['S3'] = await registerSession(people.coordinator101, 'site-101');
  const badCsv = effortToCsv(generateSession({ efforts: 1, base: { fvcL: 3.2, pefLPerS: 6.5 } }, 21)[0].recording).replace('time_s,volume_l', 'seconds,litres');
  expect((await upload(people.coordinator101, sessions['S3'].id, 'bad-header.csv', strToU8(badCsv))).status).toBe(422);
  sessions['S4'] = await registerSession(people.coordinator101, 'site-101');
  await checkedSession('S6', people.coordinator101, 'site-101', '2026-11-03T08:00:00.000Z', 106);
  await checkedSession('S7', people.coordinator101, 'site-101', '2026-11-03T09:00:00.000Z', 107);
  // Site 102: S5, on a day of its own (the time filter test uses it).
  await checkedSession('S5', people.coordinator102, 'site-102', '2026-11-05T08:00:00.000Z', 105);

  // Engine suggestions: S1 has one usable FEV1 and one unacceptable FVC; every other effort is acceptable.
  setSuggestions('S1', [A, A, U], [A, N, A]);
  for (const name of ['S2', 'S5', 'S6', 'S7']) setSuggestions(name, [A, A, A], [A, A, A]);
  db().prepare(`update test_sessions set fev1_grade = 'A', fvc_grade = 'B' where id = ?`).run(sessions['S1'].id);

  // Reads. S2 is read twice (reader 1, reader 2), disagrees, and is adjudicated; S5, S6, S7 are read once.
  insertRead({ id: 'R1', session: 'S2', readerId: 'user-reader-1', kind: 'first', status: 'signed', claimedAt: '2026-11-04T08:00:00.000Z', minutes: 30, fev1: [A, A, U], fvc: [A, A, A] });
  insertRead({ id: 'R2', session: 'S2', readerId: 'user-reader-2', kind: 'second', status: 'signed', claimedAt: '2026-11-04T08:00:00.000Z', minutes: 50, fev1: [A, A, A], fvc: [A, N, A] });
  insertRead({ id: 'R3', session: 'S2', readerId: 'user-adjudicator', kind: 'adjudication', status: 'signed', claimedAt: '2026-11-04T10:00:00.000Z', minutes: 20, fev1: [A, A, U], fvc: [A, A, A], grades: ['C', 'A'] });
  insertRead({ id: 'R4', session: 'S5', readerId: 'user-reader-1', kind: 'first', status: 'signed', claimedAt: '2026-11-06T08:00:00.000Z', minutes: 40, fev1: [A, A, A], fvc: [A, A, N], grades: ['A', 'B'] });
  insertRead({ id: 'R6', session: 'S6', readerId: 'user-reader-2', kind: 'first', status: 'signed', claimedAt: '2026-11-03T12:00:00.000Z', minutes: 10, fev1: [A, A, A], fvc: [A, A, A], grades: ['A', 'A'] });
  insertRead({ id: 'R7', session: 'S7', readerId: 'user-reader-1', kind: 'first', status: 'signed', claimedAt: '2026-11-04T12:00:00.000Z', minutes: 60, fev1: [A, A, A], fvc: [A, A, A], grades: ['A', 'A'] });
  insertRead({ id: 'R5', session: 'S1', readerId: 'user-reader-2', kind: 'first', status: 'in-progress', claimedAt: '2026-11-06T09:00:00.000Z', fev1: [A, A, U], fvc: [A, N, A] });
  db().prepare(`update test_sessions set status = 'in-reading' where id = ?`).run(sessions['S1'].id);
  releaseFeedback('S2', 30);
  releaseFeedback('S6', 10);
  releaseFeedback('S7', 50);
  releaseFeedback('S5', 60);

  // The report is generated on 2026-11-10 at noon.
  now = new Date('2026-11-10T12:00:00.000Z');
  insertQuery('Q1', 'S1', 'open', 3);
  insertQuery('Q2', 'S6', 'answered', 1);
  insertQuery('Q3', 'S7', 'closed', 6);
  // Calibration checks of a 3.00 L syringe at site 101; ATS/ERS 2019 (Graham et al. 2019): within +/-3 %.
  for (const [measuredVolumeL, daysAgo] of [
    [3.02, 10],
    [3.15, 5],
    [2.95, 2],
  ] as const) {
    const checkedAt = new Date(now.getTime() - daysAgo * 86_400_000).toISOString();
    const response = await send(people.coordinator101, 'POST', `${studyUrl()}/sites/site-101/calibration-checks`, {
      deviceSerialNumber: 'SN-101-A',
      syringeVolumeL: 3,
      measuredVolumeL,
      checkedAt,
    });
    expect(response.status).toBe(201);
  }
});

afterAll(async () => {
  await tidemark?.close();
});

describe('the audit trail as the monitor reads it', () => {
  it('lists rows newest first with who, when, what, parsed old and new values, and the reason', async () => {
    const page = await getJson<AuditPage>(people.monitor, '/audit?pageSize=200');
    expect(page.total).toBeGreaterThan(10);
    const sequences = page.items.map((item) => item.sequence);
    expect(sequences).toEqual([...sequences].sort((a, b) => b - a));

    const rejection = page.items.find((item) => item.action === 'reject-file')!;
    expect(rejection).toMatchObject({
      user: { id: 'user-coordinator-101', name: 'Tove Brennsund', role: 'site-coordinator' },
      siteId: 'site-101',
      siteNumber: '101',
      entity: 'session',
      entityId: sessions['S3'].id,
      at: '2026-11-02T10:00:00.000Z',
      oldValue: { status: 'awaiting-file', currentUploadId: null },
      withheld: [],
    });
    expect(rejection.newValue).toMatchObject({ status: 'rejected', reasons: [expect.stringMatching(/header/i)] });
  });

  it.each([
    ['entity', 'entity=session', (item: AuditPage['items'][number]) => item.entity === 'session'],
    ['action', 'action=check-file', (item: AuditPage['items'][number]) => item.action === 'check-file'],
    ['site', 'siteId=site-102', (item: AuditPage['items'][number]) => item.siteId === 'site-102'],
    ['user', 'userId=user-coordinator-102', (item: AuditPage['items'][number]) => item.user.id === 'user-coordinator-102'],
    ['a UTC day', 'from=2026-11-05&to=2026-11-05', (item: AuditPage['items'][number]) => item.at.startsWith('2026-11-05')],
    [
      'a time window with offsets',
      'from=2026-11-02T09:30:00%2B01:00&to=2026-11-02T10:00:00Z',
      (item: AuditPage['items'][number]) => item.at >= '2026-11-02T08:30:00.000Z' && item.at <= '2026-11-02T10:00:00.000Z',
    ],
  ])('filters by %s', async (_name, query, holds) => {
    const all = await getJson<AuditPage>(people.monitor, '/audit?pageSize=200');
    expect(all.total).toBeLessThanOrEqual(200);
    const filtered = await getJson<AuditPage>(people.monitor, `/audit?pageSize=200&${query}`);
    expect(filtered.items.length).toBeGreaterThan(0);
    expect(filtered.items.every(holds)).toBe(true);
    // Nothing that matches is left out.
    expect(filtered.total).toBe(all.items.filter(holds).length);
  });

  it('counts the rows of a filter by hand: four checked files at site 101, one at site 102', async () => {
    expect((await getJson<AuditPage>(people.monitor, '/audit?action=check-file')).total).toBe(5);
    expect((await getJson<AuditPage>(people.monitor, '/audit?action=check-file&siteId=site-101')).total).toBe(4);
    expect((await getJson<AuditPage>(people.monitor, '/audit?action=reject-file&siteId=site-102')).total).toBe(0);
  });

  it('pages on the server without gaps or overlaps', async () => {
    const whole = await getJson<AuditPage>(people.monitor, '/audit?entity=session&pageSize=200');
    const first = await getJson<AuditPage>(people.monitor, '/audit?entity=session&pageSize=3&page=0');
    const second = await getJson<AuditPage>(people.monitor, '/audit?entity=session&pageSize=3&page=1');
    expect(first).toMatchObject({ total: whole.total, page: 0, pageSize: 3 });
    expect([...first.items, ...second.items].map((item) => item.sequence)).toEqual(whole.items.slice(0, 6).map((item) => item.sequence));
    const beyond = await getJson<AuditPage>(people.monitor, `/audit?entity=session&pageSize=3&page=${Math.ceil(whole.total / 3)}`);
    expect(beyond.items).toEqual([]);
  });

  it.each([
    ['a page size above 200', 'pageSize=500', /pageSize/],
    ['a negative page', 'page=-1', /page/],
    ['a date that is not one', 'from=yesterday', /from/],
    ['from after to', 'from=2026-11-05&to=2026-11-01', /from .* is after to/],
    ['an unknown site', 'siteId=site-999', /site-999/],
    ['an entity with spaces', 'entity=bad%20value', /entity/],
  ])('refuses %s with a message naming the field', async (_name, query, message) => {
    const response = await people.monitor.client.fetch(`${studyUrl()}/audit?${query}`);
    expect(response.status).toBe(400);
    const body = (await response.json()) as { error: { message: string } };
    expect(body.error.message).toMatch(message);
  });

  it('treats an empty filter as none', async () => {
    const page = await getJson<AuditPage>(people.monitor, '/audit?entity=&action=&siteId=&userId=&from=&to=');
    expect(page.total).toBe((await getJson<AuditPage>(people.monitor, '/audit')).total);
  });

  it.each([
    ['data manager', 'dataManager', 200],
    ['study admin', 'admin', 200],
    ['over-reader', 'reader', 403],
    ['site coordinator', 'coordinator101', 403],
  ] as const)('is open to a %s: %s', async (_name, person, status) => {
    for (const path of ['/audit', '/audit/filter-options', '/performance/sites', '/performance/readers', '/performance/export.xlsx']) {
      const response = await people[person].client.fetch(`${studyUrl()}${path}`);
      expect({ path, status: response.status }).toEqual({ path, status });
    }
    const verify = await send(people[person], 'POST', `${studyUrl()}/audit/verify`);
    expect(verify.status).toBe(status);
  });

  it('refuses an anonymous caller', async () => {
    expect((await fetch(`${studyUrl()}/audit`)).status).toBe(401);
  });

  it('offers the filter values present in the trail', async () => {
    const options = await getJson<{ sites: { id: string }[]; users: { id: string; name: string }[]; entities: string[]; actions: string[] }>(
      people.monitor,
      '/audit/filter-options',
    );
    expect(options.sites.map((site) => site.id)).toEqual(['site-101', 'site-102', 'site-201', 'site-301']);
    expect(options.entities).toEqual(expect.arrayContaining(['session', 'calibration-check']));
    expect(options.actions).toEqual(expect.arrayContaining(['check-file', 'reject-file']));
    expect(options.users).toEqual(expect.arrayContaining([{ id: 'user-coordinator-102', name: 'Inés Carrasquilla' }]));
  });

  it('withholds treatment fields from a monitor where the study blinds monitors, and only there', async () => {
    tidemark.services.audit.write({ userId: 'system', role: 'system' }, (record) =>
      record({ studyId: DEMO_STUDY.id, entity: 'blinding-probe', entityId: 'p1', action: 'import', newValue: { treatmentArm: 'halvoterol 50 ug', status: 'ok' } }),
    );
    const asMonitor = await getJson<AuditPage>(people.monitor, '/audit?entity=blinding-probe');
    expect(asMonitor.blinding).toMatchObject({ monitorsBlinded: true, appliesToYou: true });
    expect(asMonitor.items[0]).toMatchObject({
      newValue: { treatmentArm: WITHHELD_VALUE, status: 'ok' },
      withheld: ['newValue.treatmentArm'],
      user: { name: 'Tidemark (system)', role: 'system' },
    });
    const asDataManager = await getJson<AuditPage>(people.dataManager, '/audit?entity=blinding-probe');
    expect(asDataManager.blinding.appliesToYou).toBe(false);
    expect(asDataManager.items[0].newValue).toEqual({ treatmentArm: 'halvoterol 50 ug', status: 'ok' });

    const blinding = db().prepare('select blinding_json from studies where id = ?').pluck().get(DEMO_STUDY.id) as string;
    db().prepare('update studies set blinding_json = ? where id = ?').run(JSON.stringify({ ...JSON.parse(blinding), monitorsBlinded: false }), DEMO_STUDY.id);
    try {
      const unblinded = await getJson<AuditPage>(people.monitor, '/audit?entity=blinding-probe');
      expect(unblinded.blinding).toMatchObject({ monitorsBlinded: false, appliesToYou: false });
      expect(unblinded.items[0].newValue).toEqual({ treatmentArm: 'halvoterol 50 ug', status: 'ok' });
    } finally {
      db().prepare('update studies set blinding_json = ? where id = ?').run(blinding, DEMO_STUDY.id);
    }
  });
});

describe('site performance, against a hand count', () => {
  let report: SitePerformanceReport;
  const site = (id: string) => report.sites.find((s) => s.siteId === id)!;
  beforeAll(async () => {
    report = await getJson<SitePerformanceReport>(people.monitor, '/performance/sites');
  });

  it('reports every site of the study, at the time generated, with the study target', () => {
    expect(report.generatedAt).toBe('2026-11-10T12:00:00.000Z');
    expect(report.turnaroundTargetHours).toBe(48);
    expect(report.sites.map((s) => s.siteNumber)).toEqual(['101', '102', '201', '301']);
  });

  it('counts sessions and files', () => {
    // Site 101: S1-S4, S6, S7 = 6; S4 awaits its file; S3 rejected; S1, S2, S6, S7 checked; 5 files, S3's rejected.
    expect(site('site-101').sessions).toEqual({ total: 6, awaitingFile: 1, checked: 4, rejected: 1, filesReceived: 5, filesRejected: 1 });
    expect(site('site-102').sessions).toEqual({ total: 1, awaitingFile: 0, checked: 1, rejected: 0, filesReceived: 1, filesRejected: 0 });
    expect(site('site-201').sessions.total).toBe(0);
  });

  it("counts the engine's and the final reads' acceptability", () => {
    // Engine, site 101: 4 sessions x 3 efforts = 12; S1 has one usable FEV1 and one unacceptable FVC.
    expect(site('site-101').engineAcceptability).toEqual({
      efforts: 12,
      fev1: { acceptable: 11, usable: 1, notAcceptable: 0, acceptablePercent: (100 * 11) / 12 },
      fvc: { acceptable: 11, usable: 0, notAcceptable: 1, acceptablePercent: (100 * 11) / 12 },
    });
    // Final reads, site 101: R3 (S2's adjudication, one usable FEV1), R6, R7: 9 efforts.
    expect(site('site-101').readerAcceptability).toEqual({
      efforts: 9,
      fev1: { acceptable: 8, usable: 1, notAcceptable: 0, acceptablePercent: (100 * 8) / 9 },
      fvc: { acceptable: 9, usable: 0, notAcceptable: 0, acceptablePercent: 100 },
    });
    // Site 102: R4 calls one FVC not acceptable.
    expect(site('site-102').readerAcceptability.fvc).toEqual({ acceptable: 2, usable: 0, notAcceptable: 1, acceptablePercent: (100 * 2) / 3 });
    expect(site('site-201').engineAcceptability.fev1.acceptablePercent).toBeNull();
  });

  it('takes grades from final reads where there are any, else from the engine', () => {
    // S1 engine A/B; S2 adjudication C/A (not the first read's); S6 A/A; S7 A/A.
    expect(site('site-101').grades).toEqual({
      fev1: { A: 3, B: 0, C: 1, D: 0, E: 0, F: 0, U: 0 },
      fvc: { A: 3, B: 1, C: 0, D: 0, E: 0, F: 0, U: 0 },
      fromFinalReads: 3,
      fromEngine: 1,
    });
    expect(site('site-102').grades).toMatchObject({ fev1: { A: 1 }, fvc: { B: 1 }, fromFinalReads: 1, fromEngine: 0 });
  });

  it('measures turnaround from upload to feedback: median and p90 (nearest rank)', () => {
    // Site 101: 10, 30, 50 h: median 30, p90 the 3rd of 3 = 50; 2 of 3 within 48 h.
    expect(site('site-101').turnaround).toEqual({ sessions: 3, medianHours: 30, p90Hours: 50, withinTargetPercent: (100 * 2) / 3 });
    expect(site('site-102').turnaround).toEqual({ sessions: 1, medianHours: 60, p90Hours: 60, withinTargetPercent: 0 });
    expect(site('site-201').turnaround).toEqual({ sessions: 0, medianHours: null, p90Hours: null, withinTargetPercent: null });
  });

  it('counts open queries and their age', () => {
    // Q1 open 3 days, Q2 answered 1 day (still not closed), Q3 closed.
    expect(site('site-101').openQueries).toEqual({ count: 2, oldestAgeDays: 3, medianAgeDays: 2 });
    expect(site('site-102').openQueries).toEqual({ count: 0, oldestAgeDays: null, medianAgeDays: null });
  });

  it('reports calibration compliance and days since the last check', () => {
    // 3.02 L (+0.7 %) and 2.95 L (-1.7 %) pass, 3.15 L (+5 %) fails; the last check was 2 days ago.
    expect(site('site-101').calibration).toEqual({
      checks: 3,
      withinTolerance: 2,
      compliancePercent: (100 * 2) / 3,
      lastCheckedAt: '2026-11-08T12:00:00.000Z',
      daysSinceLastCheck: 2,
    });
    expect(site('site-102').calibration).toEqual({ checks: 0, withinTolerance: 0, compliancePercent: null, lastCheckedAt: null, daysSinceLastCheck: null });
  });
});

describe('reader performance, against a hand count', () => {
  let report: ReaderPerformanceReport;
  const reader = (id: string) => report.readers.find((r) => r.readerId === id)!;
  beforeAll(async () => {
    report = await getJson<ReaderPerformanceReport>(people.monitor, '/performance/readers');
  });

  it('counts signed reads, reads under way and read time', () => {
    expect(report.readers.map((r) => r.readerId).sort()).toEqual(['user-adjudicator', 'user-reader-1', 'user-reader-2']);
    // Reader 1: R1 (30 min), R4 (40), R7 (60) -> median 40. Reader 2: R2 (50), R6 (10) -> 30; R5 under way.
    expect(reader('user-reader-1')).toMatchObject({
      name: 'Dr Ilse Vandermeer',
      signedReads: 3,
      signedByKind: { first: 3, second: 0, adjudication: 0 },
      inProgress: 0,
      signedLast30Days: 3,
      medianReadMinutes: 40,
    });
    expect(reader('user-reader-2')).toMatchObject({ signedReads: 2, signedByKind: { first: 1, second: 1, adjudication: 0 }, inProgress: 1, medianReadMinutes: 30 });
    expect(reader('user-adjudicator')).toMatchObject({ signedReads: 1, signedByKind: { adjudication: 1 }, medianReadMinutes: 20 });
  });

  it("counts overrides of the engine's suggestions", () => {
    // Reader 1: 18 verdicts; R1 FEV1 effort 3 (usable), R4 FVC effort 3 (not acceptable) -> 2.
    expect(reader('user-reader-1')).toMatchObject({ verdicts: 18, overrides: 2, overridePercent: (100 * 2) / 18 });
    // Reader 2: 12 verdicts; R2 FVC effort 2 -> 1. The adjudicator: R3 FEV1 effort 3 -> 1 of 6.
    expect(reader('user-reader-2')).toMatchObject({ verdicts: 12, overrides: 1, overridePercent: (100 * 1) / 12 });
    expect(reader('user-adjudicator')).toMatchObject({ verdicts: 6, overrides: 1, overridePercent: (100 * 1) / 6 });
  });

  it("computes agreement and Cohen's kappa on the dual-read session", () => {
    // S2, R1 vs R2, 6 verdicts: (A,A) (A,A) | (A,A) (A,N) | (U,A) (A,A): 4 agree -> 66.7 %.
    // Margins: R1 A5 U1 N0, R2 A5 U0 N1; pe = 25/36, po = 24/36, kappa = (24-25)/(36-25) = -1/11 (Cohen 1960).
    for (const agreement of [report.overall, reader('user-reader-1').agreement, reader('user-reader-2').agreement]) {
      expect(agreement.comparedVerdicts).toBe(6);
      expect(agreement.percentAgreement).toBeCloseTo((100 * 4) / 6, 10);
      expect(agreement.kappa).toBeCloseTo(-1 / 11, 10);
    }
    expect(report.overall.comparedSessions).toBe(1);
    expect(reader('user-adjudicator').agreement).toEqual({ comparedVerdicts: 0, percentAgreement: null, kappa: null });
    expect(report.method).toMatch(/Cohen/);
  });
});

describe('the performance export', () => {
  it('holds the two dashboards and a readme with the caution', async () => {
    const response = await people.monitor.client.fetch(`${studyUrl()}/performance/export.xlsx`);
    expect(response.status).toBe(200);
    expect(response.headers.get('content-type')).toMatch(/spreadsheetml/);
    expect(response.headers.get('content-disposition')).toMatch(/performance-HLX-201-2026-11-10\.xlsx/);
    const workbook = new ExcelJS.Workbook();
    await workbook.xlsx.load(Buffer.from(await response.arrayBuffer()) as unknown as ExcelJS.Buffer);
    expect(workbook.worksheets.map((sheet) => sheet.name)).toEqual(['Read me', 'Sites', 'Readers']);
    const readme = workbook.getWorksheet('Read me')!;
    const readmeText = readme.getSheetValues().flat().join(' ');
    expect(readmeText).toContain(PERFORMANCE_CAUTION);

    const sites = workbook.getWorksheet('Sites')!;
    const header = (sites.getRow(1).values as unknown[]).slice(1);
    const site101 = (sites.getRow(2).values as unknown[]).slice(1);
    const cell = (name: string) => site101[header.indexOf(name)];
    expect(sites.rowCount).toBe(5);
    expect([cell('Site'), cell('Sessions'), cell('Rejected'), cell('Turnaround median (h)'), cell('Turnaround p90 (h)'), cell('Open queries')]).toEqual([
      '101', 6, 1, 30, 50, 2,
    ]);
    const readers = workbook.getWorksheet('Readers')!;
    expect(readers.rowCount).toBe(4);
  });
});

describe('chain verification on demand', () => {
  it('verifies the whole chain, returns the result and records the verification', async () => {
    const rowsBefore = db().prepare('select count(*) from audit_events').pluck().get() as number;
    const response = await send(people.monitor, 'POST', `${studyUrl()}/audit/verify`);
    expect(response.status).toBe(200);
    const result = (await response.json()) as ChainVerificationResult;
    expect(result).toMatchObject({ ok: true, rowsChecked: rowsBefore, firstBreak: null, verifiedAt: now.toISOString() });
    expect(result.elapsedMs).toBeGreaterThanOrEqual(0);
    const trail = await getJson<AuditPage>(people.monitor, '/audit?entity=audit-trail&action=verify&userId=user-monitor');
    expect(trail.items[0]).toMatchObject({ user: { name: 'Jonas Feldkirch', role: 'monitor' }, newValue: { ok: true, rowsChecked: rowsBefore } });
  });

  it('names a row changed in SQLite once the triggers are dropped', async () => {
    const target = db().prepare(`select sequence from audit_events where action = 'reject-file'`).pluck().get() as number;
    const raw = new Sqlite(tidemark.deps.config.databaseFile);
    try {
      // The triggers refuse the change first.
      expect(() => raw.prepare(`update audit_events set reason = 'tidied' where sequence = ?`).run(target)).toThrow(/append-only/);
      raw.exec('drop trigger audit_events_no_update');
      raw.prepare(`update audit_events set new_value = '{"status":"checked"}' where sequence = ?`).run(target);
    } finally {
      raw.close();
    }
    const response = await send(people.dataManager, 'POST', `${studyUrl()}/audit/verify`);
    expect(response.status).toBe(200);
    const result = (await response.json()) as ChainVerificationResult;
    expect(result.ok).toBe(false);
    expect(result.rowsChecked).toBe(target - 1);
    expect(result.firstBreak).toEqual({ sequence: target, problem: expect.stringMatching(new RegExp(`row ${target} was changed after it was written`)) });
  });
});
