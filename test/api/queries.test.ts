/**
 * Queries to sites end to end: the real app, a real SQLite file and the SMTP catcher on loopback.
 * Reads are put in the database directly (one row per read, as the reading room stores them), so
 * that these tests depend only on the query rules: blinding, roles, locks, e-mails and the audit.
 */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { Query } from '../../shared/contracts/reading.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };
interface SessionFacts {
  id: string;
  uploadId: string;
  subjectCode: string;
  siteId: string;
  subjectId: string;
}

let tidemark: Running;
let coordinator101: Caller;
let coordinator102: Caller;
let readerOne: Caller;
let readerTwo: Caller;
let dataManager: Caller;
let monitor: Caller;
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;

/** Everything the reader received, to check that none of it names the session, its site or a person. */
const readerResponses: string[] = [];
const FORBIDDEN_FOR_READERS = ['site-101', 'Tove Brennsund', 'Priya Halloran', 'Dr Ilse Vandermeer', 'coordinator.101@'];

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  [coordinator101, coordinator102, readerOne, readerTwo, dataManager, monitor] = await Promise.all(
    [
      'coordinator.101@tidemark.example',
      'coordinator.102@tidemark.example',
      'reader.one@tidemark.example',
      'reader.two@tidemark.example',
      'data.manager@tidemark.example',
      'monitor@tidemark.example',
    ].map((email) => signIn(tidemark.url, email)),
  );
});
afterAll(async () => {
  await tidemark?.close();
});

function call(caller: Caller, method: string, url: string, body?: unknown) {
  return caller.client.fetch(url, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
}

/** A reader's call; its body is kept for the blinding check. */
async function asReader(caller: Caller, method: string, url: string, body?: unknown) {
  const response = await call(caller, method, url, body);
  const text = await response.text();
  readerResponses.push(text);
  return { status: response.status, text, json: () => JSON.parse(text) as unknown };
}

const usedSessions = new Set<string>();
/** A checked demo session of a site not used by another test yet. */
function checkedSession(siteId = 'site-101'): SessionFacts {
  const rows = tidemark.deps.db.$client
    .prepare(
      `select s.id, s.current_upload_id as uploadId, subj.code as subjectCode, s.site_id as siteId, s.subject_id as subjectId
         from test_sessions s join subjects subj on subj.id = s.subject_id
        where s.study_id = ? and s.site_id = ? and s.status = 'checked' order by s.id`,
    )
    .all(DEMO_STUDY.id, siteId) as SessionFacts[];
  const row = rows.find((candidate) => !usedSessions.has(candidate.id));
  if (!row) throw new Error(`No unused checked session left at ${siteId}`);
  usedSessions.add(row.id);
  return row;
}

/** A read of the session by the reader, stored as the reading room stores it. */
function insertRead(session: SessionFacts, readerId: string, status: 'in-progress' | 'withdrawn' | 'signed' = 'in-progress'): { id: string; blindCode: string } {
  const id = randomUUID();
  const blindCode = `RC-${id.slice(0, 6).toUpperCase()}`;
  const now = new Date().toISOString();
  tidemark.deps.db.$client
    .prepare(
      `insert into reads (id, study_id, session_id, upload_id, reader_id, kind, blind_code, status, version, claimed_at, due_at, updated_at)
       values (?, ?, ?, ?, ?, 'first', ?, ?, 1, ?, ?, ?)`,
    )
    .run(id, DEMO_STUDY.id, session.id, session.uploadId, readerId, blindCode, status, now, now, now);
  return { id, blindCode };
}

function lockSession(sessionId: string, reason = 'Visit data cleaned and frozen'): void {
  tidemark.deps.db.$client
    .prepare(
      `insert into data_locks (id, study_id, scope, scope_id, reason, locked_by, locked_at) values (?, ?, 'session', ?, ?, 'user-data-manager', ?)`,
    )
    .run(randomUUID(), DEMO_STUDY.id, sessionId, reason, new Date().toISOString());
}

/** Mails caught since `from`, to one address, with soft line breaks and folded headers undone. */
async function mailsTo(address: string, from: number): Promise<string[]> {
  await tidemark.services.messages.settle();
  return tidemark.fakes
    .mail!.messages.slice(from)
    .map((raw) => raw.replace(/=\r?\n/g, '').replace(/\r?\n(?=[ \t])/g, ''))
    .filter((text) => text.includes(`To: ${address}`));
}
const mailCount = () => tidemark.fakes.mail!.messages.length;
const subjectOf = (mail: string) => /^Subject: (.*)$/m.exec(mail)?.[1].trim();

describe('a query from a read: open, answered, followed up, closed', () => {
  let session: SessionFacts;
  let read: { id: string; blindCode: string };
  let query: Query;
  let mailsBefore: number;

  beforeAll(async () => {
    session = checkedSession();
    read = insertRead(session, 'user-reader-1');
    mailsBefore = mailCount();
    const response = await asReader(readerOne, 'POST', `${studyUrl()}/reads/${read.id}/queries`, {
      question: 'Effort 2 looks cut short: was the subject coughing?',
      requestRepeat: true,
    });
    expect(response.status).toBe(201);
    query = response.json() as Query;
  });

  it('answers the reader blinded: no session, subject, site or names', () => {
    expect(query).toMatchObject({
      status: 'open',
      requestRepeat: true,
      openedByLabel: 'Over-reader',
      sessionId: null,
      subjectCode: null,
      siteNumber: null,
      messages: [],
    });
    expect(JSON.stringify(query)).not.toContain(session.id);
    expect(JSON.stringify(query)).not.toContain(session.subjectCode);
  });

  it('e-mails the coordinators of the site, asking for a repeat, without the reader\'s name', async () => {
    const mails = await mailsTo('coordinator.101@tidemark.example', mailsBefore);
    expect(mails).toHaveLength(1);
    expect(subjectOf(mails[0])).toMatch(new RegExp(`^Repeat the test requested: Subject ${session.subjectCode}, visit \\S+, timepoint `));
    expect(mails[0]).toContain('The central over-reader has a question');
    expect(mails[0]).toContain('Effort 2 looks cut short');
    expect(mails[0]).toContain(`/site-desk/sessions/${DEMO_STUDY.id}/${session.id}`);
    expect(mails[0]).not.toContain('Vandermeer');
    expect(await mailsTo('coordinator.102@tidemark.example', mailsBefore)).toHaveLength(0);
  });

  it('shows the site its query, with the reader only as "Over-reader"', async () => {
    const response = await call(coordinator101, 'GET', `${studyUrl()}/sessions/${session.id}/queries`);
    expect(response.status).toBe(200);
    const text = await response.text();
    const [listed] = JSON.parse(text) as Query[];
    expect(listed).toMatchObject({ id: query.id, openedByLabel: 'Over-reader', subjectCode: session.subjectCode, siteNumber: '101', sessionId: session.id });
    expect(text).not.toContain('Vandermeer');
    expect(text).not.toContain('user-reader-1');
  });

  it('keeps the query from other readers and from other sites', async () => {
    expect((await asReader(readerTwo, 'GET', `${studyUrl()}/reads/${read.id}/queries`)).status).toBe(404);
    expect((await asReader(readerTwo, 'POST', `${studyUrl()}/reads/${read.id}/queries`, { question: 'Not my read at all?' })).status).toBe(404);
    expect((await call(coordinator102, 'GET', `${studyUrl()}/sessions/${session.id}/queries`)).status).toBe(404);
    expect((await call(coordinator102, 'POST', `${studyUrl()}/queries/${query.id}/answers`, { body: 'We are another site.' })).status).toBe(404);
  });

  it.each([
    ['an over-reader', () => readerOne],
    ['a data manager', () => dataManager],
    ['a monitor', () => monitor],
  ])('refuses an answer from %s (only the site answers)', async (_who, caller) => {
    const response = await call(caller(), 'POST', `${studyUrl()}/queries/${query.id}/answers`, { body: 'Not my place to answer.' });
    expect(response.status).toBe(403);
    expect(((await response.json()) as { error: { message: string } }).error.message).toContain('site coordinator');
  });

  it('takes the site answer, tells the reader by blinded e-mail, and shows it to the reader as "Site"', async () => {
    const before = mailCount();
    const response = await call(coordinator101, 'POST', `${studyUrl()}/queries/${query.id}/answers`, {
      body: `Subject ${session.subjectCode} coughed; we repeat the test tomorrow.`,
    });
    expect(response.status).toBe(201);
    expect((await response.json()) as Query).toMatchObject({ status: 'answered', messages: [{ authorLabel: 'Site' }] });

    const mails = await mailsTo('reader.one@tidemark.example', before);
    expect(mails).toHaveLength(1);
    expect(subjectOf(mails[0])).toBe(`Your query on read ${read.blindCode} was answered`);
    for (const forbidden of [session.subjectCode, session.id, 'site 101', 'Site 101', 'coughed']) expect(mails[0]).not.toContain(forbidden);
    expect(mails[0]).toContain(`/reading/reads/${DEMO_STUDY.id}/${read.id}`);

    const listed = await asReader(readerOne, 'GET', `${studyUrl()}/reads/${read.id}/queries`);
    expect(listed.status).toBe(200);
    // The site named the subject in its answer: the reader reads a placeholder instead.
    expect(listed.json()).toMatchObject([
      { id: query.id, status: 'answered', sessionId: null, messages: [{ authorLabel: 'Site', body: 'Subject [subject] coughed; we repeat the test tomorrow.' }] },
    ]);
  });

  it('refuses to close a query for the site, a monitor, or an over-reader who did not open it', async () => {
    expect((await call(coordinator101, 'POST', `${studyUrl()}/queries/${query.id}/close`)).status).toBe(403);
    expect((await call(monitor, 'POST', `${studyUrl()}/queries/${query.id}/close`)).status).toBe(403);
    expect((await asReader(readerTwo, 'POST', `${studyUrl()}/queries/${query.id}/close`)).status).toBe(404);
    expect((await asReader(readerTwo, 'POST', `${studyUrl()}/queries/${query.id}/messages`, { body: 'Me too?' })).status).toBe(404);
  });

  it('reopens the query when the reader writes again, and tells the site', async () => {
    const before = mailCount();
    const response = await asReader(readerOne, 'POST', `${studyUrl()}/queries/${query.id}/messages`, { body: 'Please also send the calibration log.' });
    expect(response.status).toBe(201);
    expect(response.json()).toMatchObject({ status: 'open', messages: [{ authorLabel: 'Site' }, { authorLabel: 'Over-reader' }] });
    const mails = await mailsTo('coordinator.101@tidemark.example', before);
    expect(mails.map(subjectOf)).toEqual([expect.stringMatching(/^Query reopened: Subject /)]);
    expect(mails[0]).toContain('Please also send the calibration log.');
  });

  it('closes the query for the reader who opened it, tells the site, and takes no answer afterwards', async () => {
    const before = mailCount();
    const response = await asReader(readerOne, 'POST', `${studyUrl()}/queries/${query.id}/close`);
    expect(response.status).toBe(200);
    expect(response.json()).toMatchObject({ status: 'closed', closedAt: expect.any(String) });
    const mails = await mailsTo('coordinator.101@tidemark.example', before);
    expect(mails.map(subjectOf)).toEqual([expect.stringMatching(/^Query closed: Subject /)]);

    const late = await call(coordinator101, 'POST', `${studyUrl()}/queries/${query.id}/answers`, { body: 'One more thing.' });
    expect(late.status).toBe(409);
    expect(((await late.json()) as { error: { code: string } }).error.code).toBe('query-closed');
    expect((await asReader(readerOne, 'POST', `${studyUrl()}/queries/${query.id}/close`)).status).toBe(409);
  });

  it('audits every step as entity "query", by the right people in their roles, and the chain verifies', () => {
    const rows = tidemark.deps.db.$client
      .prepare(`select action, user_id as userId, role from audit_events where entity = 'query' and entity_id = ? order by sequence`)
      .all(query.id) as { action: string; userId: string; role: string }[];
    expect(rows.map((row) => `${row.action}:${row.userId}`)).toEqual([
      'open:user-reader-1',
      'answer:user-coordinator-101',
      'follow-up:user-reader-1',
      'close:user-reader-1',
    ]);
    expect(rows[1].role).toBe('site-coordinator');
    expect(tidemark.services.audit.verify()).toMatchObject({ ok: true });
  });

  it('refuses a query from a read that was released back to the queue', async () => {
    const withdrawn = insertRead(checkedSession(), 'user-reader-1', 'withdrawn');
    const response = await asReader(readerOne, 'POST', `${studyUrl()}/reads/${withdrawn.id}/queries`, { question: 'Is this read still mine?' });
    expect(response.status).toBe(409);
    expect(response.text).toContain('read-withdrawn');
  });

  it('names the field of a question that is too short', async () => {
    const response = await asReader(readerOne, 'POST', `${studyUrl()}/reads/${read.id}/queries`, { question: 'Why' });
    expect(response.status).toBe(400);
    expect(response.text).toContain('question: write the question in at least 5 characters');
  });
});

describe('a data manager\'s query, the lists, and locks', () => {
  let session: SessionFacts;
  let query: Query;

  beforeAll(async () => {
    session = checkedSession();
    const before = mailCount();
    const response = await call(dataManager, 'POST', `${studyUrl()}/sessions/${session.id}/queries`, {
      question: 'The technician code differs from the visit log; which one is right?',
    });
    expect(response.status).toBe(201);
    query = (await response.json()) as Query;
    const mails = await mailsTo('coordinator.101@tidemark.example', before);
    expect(mails.map(subjectOf)).toEqual([expect.stringMatching(new RegExp(`^New query: Subject ${session.subjectCode}, visit `))]);
    expect(mails[0]).toContain('The data manager has a question');
  });

  it('shows the study team who asked, by name', () => {
    expect(query).toMatchObject({
      status: 'open',
      requestRepeat: false,
      openedByLabel: 'Data manager (Priya Halloran)',
      sessionId: session.id,
      subjectCode: session.subjectCode,
      siteNumber: '101',
    });
  });

  it('refuses the data manager\'s route to readers, monitors and sites', async () => {
    for (const caller of [readerOne, monitor, coordinator101]) {
      const response = await call(caller, 'POST', `${studyUrl()}/sessions/${session.id}/queries`, { question: 'May I open one here?' });
      expect(response.status).toBe(403);
    }
  });

  it('lists queries by status for the data manager and the monitor, and only their sites\' for a coordinator', async () => {
    const openForManager = (await (await call(dataManager, 'GET', `${studyUrl()}/queries?status=open`)).json()) as Query[];
    expect(openForManager.map((listed) => listed.id)).toContain(query.id);
    expect(openForManager.every((listed) => listed.status === 'open')).toBe(true);
    const closedForMonitor = (await (await call(monitor, 'GET', `${studyUrl()}/queries?status=closed`)).json()) as Query[];
    expect(closedForMonitor.length).toBeGreaterThan(0);
    expect(closedForMonitor.every((listed) => listed.status === 'closed')).toBe(true);
    // The study team sees the reader's name on the reader's query; the site never does.
    expect(closedForMonitor.map((listed) => listed.openedByLabel)).toContain('Over-reader (Dr Ilse Vandermeer)');

    const forSite101 = (await (await call(coordinator101, 'GET', `${studyUrl()}/queries`)).json()) as Query[];
    expect(forSite101.map((listed) => listed.id)).toContain(query.id);
    expect(forSite101.every((listed) => listed.siteNumber === '101')).toBe(true);
    const forSite102 = (await (await call(coordinator102, 'GET', `${studyUrl()}/queries`)).json()) as Query[];
    expect(forSite102.map((listed) => listed.id)).not.toContain(query.id);

    const bad = await call(dataManager, 'GET', `${studyUrl()}/queries?status=pending`);
    expect(bad.status).toBe(400);
    expect(((await bad.json()) as { error: { message: string } }).error.message).toContain('status');
    expect((await call(readerOne, 'GET', `${studyUrl()}/queries`)).status).toBe(403);
  });

  it('counts open and answered queries as blocking a lock, closed ones not', async () => {
    const scope = (kind: 'session' | 'site' | 'subject' | 'study', scopeId: string) => ({ studyId: DEMO_STUDY.id, scope: kind, scopeId });
    expect(tidemark.services.queries.hasOpenQueries(scope('session', session.id))).toBe(true);
    expect(tidemark.services.queries.hasOpenQueries(scope('subject', session.subjectId))).toBe(true);
    expect(tidemark.services.queries.hasOpenQueries(scope('site', 'site-101'))).toBe(true);
    expect(tidemark.services.queries.hasOpenQueries(scope('site', 'site-301'))).toBe(false);

    const answered = await call(coordinator101, 'POST', `${studyUrl()}/queries/${query.id}/answers`, { body: 'TECH-07 is right; the log had a typo.' });
    expect(answered.status).toBe(201);
    expect(tidemark.services.queries.hasOpenQueries(scope('session', session.id))).toBe(true);
  });

  it('tells the data manager of the answer with the session named', async () => {
    const mails = await mailsTo('data.manager@tidemark.example', 0);
    const answeredMail = mails.find((mail) => subjectOf(mail)?.startsWith('Query answered by site 101'));
    expect(answeredMail).toContain('TECH-07 is right');
    expect(answeredMail).toContain('/data-office/queries');
  });

  it('refuses queries, answers and follow-ups on a locked session with the lock reason (409), but still lets the query close', async () => {
    lockSession(session.id);
    const answer = await call(coordinator101, 'POST', `${studyUrl()}/queries/${query.id}/answers`, { body: 'An afterthought.' });
    expect(answer.status).toBe(409);
    const answerError = ((await answer.json()) as { error: { code: string; message: string } }).error;
    expect(answerError.code).toBe('locked');
    expect(answerError.message).toContain('Visit data cleaned and frozen');

    expect((await call(dataManager, 'POST', `${studyUrl()}/sessions/${session.id}/queries`, { question: 'One more on locked data?' })).status).toBe(409);
    expect((await call(dataManager, 'POST', `${studyUrl()}/queries/${query.id}/messages`, { body: 'Still there?' })).status).toBe(409);

    const closed = await call(dataManager, 'POST', `${studyUrl()}/queries/${query.id}/close`);
    expect(closed.status).toBe(200);
    expect(tidemark.services.queries.hasOpenQueries({ studyId: DEMO_STUDY.id, scope: 'session', scopeId: session.id })).toBe(false);
  });

  it('refuses a reader\'s query on a locked session without naming the session', async () => {
    const locked = checkedSession();
    const read = insertRead(locked, 'user-reader-1');
    lockSession(locked.id, `Subject ${locked.subjectCode} withdrew`);
    const response = await asReader(readerOne, 'POST', `${studyUrl()}/reads/${read.id}/queries`, { question: 'Is effort 3 complete?' });
    expect(response.status).toBe(409);
    expect(response.text).toContain('"code":"locked"');
    expect(response.text).not.toContain(locked.subjectCode);
    expect(response.text).not.toContain(locked.id);
  });
});

describe('blinding of every answer a reader got', () => {
  it('never carried a site, a subject, a session id or a name', () => {
    expect(readerResponses.length).toBeGreaterThan(8);
    const sessions = tidemark.deps.db.$client
      .prepare(`select s.id, subj.code from test_sessions s join subjects subj on subj.id = s.subject_id`)
      .all() as { id: string; code: string }[];
    for (const text of readerResponses) {
      for (const forbidden of FORBIDDEN_FOR_READERS) expect(text).not.toContain(forbidden);
      for (const row of sessions) {
        expect(text).not.toContain(row.id);
        expect(text).not.toContain(row.code);
      }
    }
  });
});
