/**
 * The reading queue's SQL against the pure rules it replaced: for random studies (sessions in every
 * status, with and without a file, an older file beside the current one, first, second
 * and adjudication reads in every state, active and lifted locks of every scope, a second study
 * beside), both query plans list exactly the sessions that read-queue-rules.ts and lock-scope.ts
 * open to the reader, in due order, with the right kind and total.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import fc from 'fast-check';
import { openDatabase, type TidemarkDatabase } from '../db/database.js';
import { lockCovers, type LockRecord } from '../locks/lock-scope.js';
import { effectiveDualRead, liveOverReads, readDueAt, readEligibility, type ReadOfSession } from './read-queue-rules.js';
import { ReadQueueRepository } from './read-queue-repository.js';

const STUDIES = ['study-a', 'study-b'] as const;
const READERS = ['reader-1', 'reader-2', 'reader-3'] as const;
const SITES = ['site-1', 'site-2'] as const;
const SUBJECTS = ['subject-1', 'subject-2', 'subject-3'] as const;
const VISITS = ['visit-1', 'visit-2'] as const;
const STATUSES = ['awaiting-file', 'rejected', 'checked', 'in-reading', 'adjudication', 'final'] as const;
/** Few distinct check times, so that ties (ordered by session id) happen often. */
const CHECK_TIMES = ['2026-11-01T08:00:00.000Z', '2026-11-01T09:30:00.000Z', '2026-11-02T08:00:00.000Z', '2026-11-03T23:59:59.999Z'];
const TURNAROUND_HOURS = 48;
const PAGE_SIZE = 3;
const MAX_SESSIONS = 14;

interface SessionCase {
  readonly study: (typeof STUDIES)[number];
  readonly status: (typeof STATUSES)[number];
  readonly hasFile: boolean;
  /** An earlier file that is no longer the session's current one, which the queue must pass over. */
  readonly hasOlderFile: boolean;
  readonly dualRead: boolean;
  readonly site: (typeof SITES)[number];
  readonly subject: (typeof SUBJECTS)[number];
  readonly visit: (typeof VISITS)[number];
  readonly checkedAt: string;
  readonly reads: readonly ReadOfSession[];
}

interface LockCase {
  readonly study: (typeof STUDIES)[number];
  readonly scope: LockRecord['scope'];
  /** Index into the ids of the scope (sites, subjects, visits or sessions). */
  readonly target: number;
  readonly active: boolean;
}

const readArbitrary: fc.Arbitrary<ReadOfSession> = fc.record({
  readerId: fc.constantFrom(...READERS),
  kind: fc.constantFrom('first' as const, 'second' as const, 'adjudication' as const),
  status: fc.constantFrom('in-progress' as const, 'withdrawn' as const, 'signed' as const),
});

const sessionArbitrary: fc.Arbitrary<SessionCase> = fc.record({
  study: fc.constantFrom(...STUDIES),
  // Weighted toward sessions awaiting a read with a file, so that pages fill and order matters.
  status: fc.constantFrom<SessionCase['status']>(...STATUSES, 'checked', 'checked', 'checked', 'in-reading'),
  hasFile: fc.constantFrom(true, true, true, false),
  hasOlderFile: fc.boolean(),
  dualRead: fc.boolean(),
  site: fc.constantFrom(...SITES),
  subject: fc.constantFrom(...SUBJECTS),
  visit: fc.constantFrom(...VISITS),
  checkedAt: fc.constantFrom(...CHECK_TIMES),
  reads: fc.array(readArbitrary, { maxLength: 2 }),
});

const lockArbitrary: fc.Arbitrary<LockCase> = fc.record({
  study: fc.constantFrom(...STUDIES),
  // The study scope is rare, or most cases would list nothing.
  scope: fc.constantFrom<LockRecord['scope']>('site', 'subject', 'visit', 'session', 'session', 'site', 'subject', 'visit', 'study'),
  target: fc.nat(20),
  active: fc.boolean(),
});

let db: TidemarkDatabase;

beforeAll(() => {
  db = openDatabase(':memory:');
  const run = (statement: string, ...values: unknown[]) => db.$client.prepare(statement).run(...values);
  run(`insert into users (id, email, name) values ('admin', 'admin@tidemark.example', 'Admin')`);
  for (const reader of READERS) run(`insert into users (id, email, name) values (?, ?, ?)`, reader, `${reader}@tidemark.example`, reader);
  for (const study of STUDIES) {
    run(
      `insert into studies (id, code, title, sponsor, indication, protocol_rule_set_id) values (?, ?, 'Queue study', 'Fictional sponsor', 'COPD', 'ats-ers-2019')`,
      study,
      study.toUpperCase(),
    );
  }
  // Sites, subjects and visits belong to study-a; sessions of study-b point at them too, which the
  // schema allows and which only tests that the study is what separates queues.
  SITES.forEach((site, n) => run(`insert into sites (id, study_id, number, name, country_code, time_zone) values (?, 'study-a', ?, ?, 'NL', 'UTC')`, site, String(n), site));
  SUBJECTS.forEach((subject, n) => run(`insert into subjects (id, study_id, site_id, code) values (?, 'study-a', 'site-1', ?)`, subject, `S-${n}`));
  VISITS.forEach((visit, n) =>
    run(
      `insert into visits (id, study_id, code, name, ordinal, day_offset, window_before_days, window_after_days) values (?, 'study-a', ?, ?, ?, ?, 3, 3)`,
      visit,
      `V${n}`,
      visit,
      n,
      n * 28,
    ),
  );
  // One timepoint per session keeps every session in a slot of its own (test_sessions_slot is unique).
  for (let n = 0; n < MAX_SESSIONS; n++) {
    run(`insert into timepoints (id, study_id, code, name, ordinal) values (?, 'study-a', ?, ?, ?)`, `timepoint-${n}`, `TP-${n}`, `Timepoint ${n}`, n);
  }
});

afterAll(() => {
  db.$client.close();
});

/** Replaces the sessions, files, reads and locks with the case's. */
function store(sessions: readonly SessionCase[], locks: readonly LockCase[]): void {
  const run = (statement: string, ...values: unknown[]) => db.$client.prepare(statement).run(...values);
  db.$client.transaction(() => {
    for (const table of ['data_locks', 'reads', 'uploads', 'test_sessions']) run(`delete from ${table}`);
    sessions.forEach((session, n) => {
      const id = sessionId(n);
      const uploadId = session.hasFile ? `upload-${n}` : null;
      run(
        `insert into test_sessions (id, study_id, site_id, subject_id, visit_id, timepoint_id, bronchodilator, tested_at, time_zone, age_years,
           height_cm, sex, technician_code, status, current_upload_id, dual_read, registered_by, registered_at, updated_at)
         values (?, ?, ?, ?, ?, ?, 'pre', '2026-10-30T08:00:00.000Z', 'UTC', 60, 170, 'female', 'T1', ?, ?, ?, 'admin',
           '2026-10-30T08:00:00.000Z', '2026-10-30T08:00:00.000Z')`,
        id,
        session.study,
        session.site,
        session.subject,
        session.visit,
        `timepoint-${n}`,
        session.status,
        uploadId,
        session.dualRead ? 1 : 0,
      );
      // Reads need a file to point at: a session without a current file has an older one then.
      if (session.hasOlderFile || (!uploadId && session.reads.length > 0)) insertUpload(`older-upload-${n}`, session.study, id, '2026-10-01T00:00:00.000Z');
      if (uploadId) insertUpload(uploadId, session.study, id, session.checkedAt);
      session.reads.forEach((read, k) =>
        run(
          `insert into reads (id, study_id, session_id, upload_id, reader_id, kind, blind_code, status, claimed_at, due_at, updated_at)
           values (?, ?, ?, ?, ?, ?, ?, ?, '2026-11-05T08:00:00.000Z', '2026-11-07T08:00:00.000Z', '2026-11-05T08:00:00.000Z')`,
          `read-${n}-${k}`,
          session.study,
          id,
          uploadId ?? `older-upload-${n}`,
          read.readerId,
          read.kind,
          `RC-${n}-${k}`,
          read.status,
        ),
      );
    });
    locks.forEach((lock, n) =>
      run(
        `insert into data_locks (id, study_id, scope, scope_id, reason, locked_by, locked_at, unlocked_by, unlocked_at)
         values (?, ?, ?, ?, 'Interim analysis', 'admin', '2026-11-04T08:00:00.000Z', ?, ?)`,
        `lock-${n}`,
        lock.study,
        lock.scope,
        lockScopeId(lock, sessions.length),
        lock.active ? null : 'admin',
        lock.active ? null : '2026-11-04T09:00:00.000Z',
      ),
    );
  })();
}

function insertUpload(id: string, study: string, session: string, processedAt: string): void {
  db.$client
    .prepare(
      `insert into uploads (id, study_id, session_id, object_key, sha256, size_bytes, original_name, content_type, uploaded_by, received_at, outcome, processed_at)
       values (?, ?, ?, ?, ?, 100, 'session.json', 'application/json', 'admin', ?, 'checked', ?)`,
    )
    .run(id, study, session, `uploads/${id}`, `sha-${id}`, processedAt, processedAt);
}

function sessionId(n: number): string {
  // Zero-padded so that id order is the order tests reason about.
  return `session-${String(n).padStart(3, '0')}`;
}

function lockScopeId(lock: LockCase, sessionCount: number): string {
  switch (lock.scope) {
    case 'study':
      return lock.study;
    case 'site':
      return SITES[lock.target % SITES.length];
    case 'subject':
      return SUBJECTS[lock.target % SUBJECTS.length];
    case 'visit':
      return VISITS[lock.target % VISITS.length];
    case 'session':
      return sessionId(lock.target % Math.max(1, sessionCount));
  }
}

/** What the queue should list for the reader in study-a, by the pure rules. */
function expectedQueue(sessions: readonly SessionCase[], locks: readonly LockCase[], readerId: string) {
  const lockRecords = locks.map((lock, n) => ({
    studyId: lock.study,
    scope: lock.scope,
    scopeId: lockScopeId(lock, sessions.length),
    unlockedAt: lock.active ? null : '2026-11-04T09:00:00.000Z',
    id: `lock-${n}`,
  }));
  const open = sessions.flatMap((session, n) => {
    const id = sessionId(n);
    if (session.study !== 'study-a' || !session.hasFile) return [];
    // The dual-read draw only matters before any live read, where it cannot close the session.
    const dualRead = effectiveDualRead(session.dualRead, liveOverReads(session.reads).length, () => true);
    const eligibility = readEligibility({ status: session.status, dualRead }, session.reads, readerId);
    const target = { studyId: 'study-a', siteId: session.site, subjectId: session.subject, visitId: session.visit, sessionId: id };
    if (!eligibility.eligible || lockRecords.some((lock) => lockCovers(lock, target))) return [];
    return [{ sessionId: id, kind: eligibility.kind, checkedAt: session.checkedAt, dueAt: readDueAt(session.checkedAt, TURNAROUND_HOURS) }];
  });
  open.sort((a, b) => a.dueAt.localeCompare(b.dueAt) || a.sessionId.localeCompare(b.sessionId));
  return { total: open.length, items: open.slice(0, PAGE_SIZE).map(({ sessionId: id, kind, checkedAt }) => ({ sessionId: id, kind, checkedAt })) };
}

describe('ReadQueueRepository.openSessions (the rules of read-queue-rules.ts and lock-scope.ts, in SQL)', () => {
  it.each([
    { plan: 'the whole backlog filtered and sorted', limits: { smallBacklog: Number.MAX_SAFE_INTEGER, filesPerPageItem: 1 } },
    // One or two files per item: the oldest files sometimes hold the page, and sometimes do not.
    { plan: 'the oldest files first, total counted from reads and locks', limits: { smallBacklog: 0, filesPerPageItem: 1 } },
    { plan: 'the oldest files first, a wider look', limits: { smallBacklog: 0, filesPerPageItem: 3 } },
  ])('lists what the rules open to the reader, in due order, with the right kind and total ($plan)', ({ limits }) => {
    const repository = new ReadQueueRepository(db, limits);
    fc.assert(
      fc.property(
        fc.array(sessionArbitrary, { maxLength: MAX_SESSIONS }),
        fc.array(lockArbitrary, { maxLength: 4 }),
        fc.constantFrom(...READERS),
        (sessions, locks, readerId) => {
          store(sessions, locks);
          const page = repository.openSessions('study-a', readerId, PAGE_SIZE);
          const listed = page.rows.map((row) => ({
            sessionId: row.sessionId,
            kind: row.liveOverReadCount === 0 ? 'first' : 'second',
            checkedAt: row.checkedAt,
          }));
          expect({ total: page.total, items: listed }).toEqual(expectedQueue(sessions, locks, readerId));
        },
      ),
      { numRuns: 300 },
    );
  });

  // The oldest-files plan counts its total from the other side; each way a session closes, alone.
  it.each<{ closedBy: string; locks: LockCase[]; reads: ReadOfSession[] }>([
    { closedBy: 'a site lock', locks: [{ study: 'study-a', scope: 'site', target: 0, active: true }], reads: [] },
    { closedBy: 'a subject lock', locks: [{ study: 'study-a', scope: 'subject', target: 0, active: true }], reads: [] },
    { closedBy: 'a visit lock', locks: [{ study: 'study-a', scope: 'visit', target: 0, active: true }], reads: [] },
    { closedBy: 'a session lock', locks: [{ study: 'study-a', scope: 'session', target: 0, active: true }], reads: [] },
    { closedBy: "another reader's claim", locks: [], reads: [{ readerId: 'reader-2', kind: 'first', status: 'in-progress' }] },
    { closedBy: "the reader's own signed read", locks: [], reads: [{ readerId: 'reader-1', kind: 'first', status: 'signed' }] },
  ])('leaves a session closed by $closedBy out of the total of the oldest-files plan', ({ locks, reads }) => {
    const base = { study: 'study-a', status: 'checked', hasFile: true, hasOlderFile: false, dualRead: false } as const;
    const sessions: SessionCase[] = [
      { ...base, site: 'site-1', subject: 'subject-1', visit: 'visit-1', checkedAt: CHECK_TIMES[0], reads },
      { ...base, site: 'site-2', subject: 'subject-2', visit: 'visit-2', checkedAt: CHECK_TIMES[1], reads: [] },
      { ...base, site: 'site-2', subject: 'subject-3', visit: 'visit-2', checkedAt: CHECK_TIMES[2], reads: [] },
    ];
    store(sessions, locks);
    const page = new ReadQueueRepository(db, { smallBacklog: 0, filesPerPageItem: 10 }).openSessions('study-a', 'reader-1', 1);
    expect({ first: page.rows[0]?.sessionId, total: page.total }).toEqual({ first: sessionId(1), total: 2 });
  });

  it('names every session a token may stand for: those with a file in the statuses asked for, in the study asked for', () => {
    const base = { hasOlderFile: true, dualRead: false, site: 'site-1', subject: 'subject-1', visit: 'visit-1', checkedAt: CHECK_TIMES[0], reads: [] } as const;
    store(
      [
        { ...base, study: 'study-a', status: 'checked', hasFile: true },
        { ...base, study: 'study-a', status: 'final', hasFile: true },
        { ...base, study: 'study-a', status: 'awaiting-file', hasFile: false },
        { ...base, study: 'study-b', status: 'checked', hasFile: true },
      ],
      [],
    );
    const repository = new ReadQueueRepository(db);
    expect(repository.tokenCandidates('study-a', ['checked', 'in-reading', 'final']).sort()).toEqual([sessionId(0), sessionId(1)]);
    expect(repository.checkedAt(sessionId(0))).toBe(CHECK_TIMES[0]);
    expect(repository.checkedAt(sessionId(2))).toBeUndefined();
  });
});
