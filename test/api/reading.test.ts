/**
 * The reading room end to end: the real app on a real SQLite file with the demo study's checked
 * sessions, readers signed in through the local identity provider. Covers the queue (order,
 * blinding, per-reader tokens), claims (one reader per single-design session), the workspace,
 * saving with optimistic concurrency, release, locks, signing and finalising, and the audit rows.
 */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type * as z from 'zod';
import type { myReadSchema, QueuePage, ReadWorkspace, SaveRead } from '../../shared/contracts/reading.js';
import type { SessionCurves } from '../../shared/contracts/sessions.js';
import { QueueTokens } from '../../server/reading/queue-token.js';
import { DEMO_SITES, DEMO_STUDY, DEMO_USERS } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };
type MyRead = z.infer<typeof myReadSchema>;
interface ErrorBody {
  error: { code: string; message: string; details?: unknown };
}

let tidemark: Running;
let readerOne: Caller;
let readerTwo: Caller;
let adjudicator: Caller;
let monitor: Caller;
let tokens: QueueTokens;
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
const READER_ONE = 'user-reader-1';
const READER_TWO = 'user-reader-2';
const ADJUDICATOR = 'user-adjudicator';

/** Every body a reader received, for the blinding check at the end. */
const readerBodies: string[] = [];

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  tokens = new QueueTokens(tidemark.dataDir);
  [readerOne, readerTwo, adjudicator, monitor] = await Promise.all(
    ['reader.one@tidemark.example', 'reader.two@tidemark.example', 'adjudicator@tidemark.example', 'monitor@tidemark.example'].map((email) =>
      signIn(tidemark.url, email),
    ),
  );
});
afterAll(async () => {
  await tidemark?.close();
});

async function call<T>(caller: Caller, method: string, path: string, body?: unknown): Promise<{ status: number; body: T; text: string }> {
  const response = await caller.client.fetch(`${studyUrl()}${path}`, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  const text = await response.text();
  if (caller !== monitor) readerBodies.push(text);
  return { status: response.status, body: (text ? JSON.parse(text) : undefined) as T, text };
}

const db = () => tidemark.deps.db.$client;

interface SessionFacts {
  id: string;
  uploadId: string;
  status: string;
  fev1Grade: string;
  fvcGrade: string;
}

const usedSessions = new Set<string>();
/** A checked demo session that no other test here has used. */
function freshCheckedSession(): SessionFacts {
  const rows = db()
    .prepare(
      `select id, current_upload_id as uploadId, status, fev1_grade as fev1Grade, fvc_grade as fvcGrade
         from test_sessions where study_id = ? and status = 'checked' order by id`,
    )
    .all(DEMO_STUDY.id) as SessionFacts[];
  const row = rows.find((candidate) => !usedSessions.has(candidate.id));
  if (!row) throw new Error('No unused checked session left');
  usedSessions.add(row.id);
  return row;
}

function sessionRow(sessionId: string) {
  return db()
    .prepare(`select status, dual_read as dualRead, feedback_released_at as feedbackReleasedAt from test_sessions where id = ?`)
    .get(sessionId) as { status: string; dualRead: number; feedbackReleasedAt: string | null };
}

function readRow(readId: string) {
  return db().prepare(`select session_id as sessionId, reader_id as readerId, kind, status from reads where id = ?`).get(readId) as {
    sessionId: string;
    readerId: string;
    kind: string;
    status: string;
  };
}

function auditOf(entityId: string) {
  return db()
    .prepare(`select entity, action, user_id as userId, role, old_value as oldValue, new_value as newValue from audit_events where entity_id = ? order by sequence`)
    .all(entityId) as { entity: string; action: string; userId: string; role: string; oldValue: string | null; newValue: string | null }[];
}

async function claim(caller: Caller, userId: string, sessionId: string) {
  return call<ReadWorkspace>(caller, 'POST', '/reading/claims', { queueToken: tokens.tokenFor(userId, sessionId) });
}

function formOf(workspace: ReadWorkspace, overrides: Partial<SaveRead> = {}): SaveRead {
  return { version: workspace.version, verdicts: workspace.verdicts, feedbackText: workspace.feedbackText, ...overrides };
}

/** The other verdict than the engine's, so that a save is an override. */
const otherThan = (verdict: string) => (verdict === 'acceptable' ? 'usable' : 'acceptable');

describe('the queue', () => {
  let overdue: SessionFacts;
  let checkedAt: string;

  beforeAll(() => {
    // One session checked three days ago: with the 48 h turnaround it is overdue and due first.
    overdue = freshCheckedSession();
    checkedAt = new Date(Date.now() - 72 * 3600_000).toISOString();
    db().prepare(`update uploads set processed_at = ? where id = ?`).run(checkedAt, overdue.uploadId);
  });

  it('lists sessions awaiting a read, oldest due first, with the overdue one at the top', async () => {
    const { status, body } = await call<QueuePage>(readerOne, 'GET', '/reading/queue');
    expect(status).toBe(200);
    expect(body.turnaroundHours).toBe(48);
    expect(body.total).toBe(body.items.length);
    expect(body.total).toBeGreaterThan(20);
    const dues = body.items.map((item) => item.dueAt);
    expect([...dues].sort()).toEqual(dues);
    expect(body.items[0]).toMatchObject({
      queueToken: tokens.tokenFor(READER_ONE, overdue.id),
      kind: 'first',
      overdue: true,
      dueAt: new Date(Date.parse(checkedAt) + 48 * 3600_000).toISOString(),
    });
    expect(body.items.filter((item) => item.overdue)).toHaveLength(1);
  });

  it('gives each reader their own opaque token for the same session', async () => {
    const one = (await call<QueuePage>(readerOne, 'GET', '/reading/queue')).body;
    const two = (await call<QueuePage>(readerTwo, 'GET', '/reading/queue')).body;
    expect(one.items[0].queueToken).not.toBe(two.items[0].queueToken);
    expect(two.items[0].queueToken).toBe(tokens.tokenFor(READER_TWO, overdue.id));
    expect(one.items[0].queueToken).not.toContain(overdue.id);
    // A token is bound to its reader: reader two cannot claim with reader one's.
    const stolen = await call<ErrorBody>(readerTwo, 'POST', '/reading/claims', { queueToken: one.items[0].queueToken });
    expect(stolen.status).toBe(404);
  });

  it('shows visit, timepoint and pre/post only as the study blinding allows', async () => {
    db().prepare(`update studies set blinding_json = ? where id = ?`).run('{"readersSeeVisit":true}', DEMO_STUDY.id);
    const { body } = await call<QueuePage>(readerOne, 'GET', '/reading/queue');
    db()
      .prepare(`update studies set blinding_json = ? where id = ?`)
      .run('{"readersSeeVisit":true,"readersSeeTimepoint":true,"readersSeeBronchodilator":true,"monitorsBlinded":true}', DEMO_STUDY.id);
    expect(body.items.every((item) => item.visitCode !== null && item.timepointCode === null && item.bronchodilator === null)).toBe(true);
  });

  it('is for over-readers only', async () => {
    expect((await call<ErrorBody>(monitor, 'GET', '/reading/queue')).status).toBe(403);
  });

  describe('two readers claim the same single-design session', () => {
    let first: { status: number; body: ReadWorkspace };
    let second: { status: number; body: ErrorBody };

    beforeAll(async () => {
      first = await claim(readerOne, READER_ONE, overdue.id);
      second = await call<ErrorBody>(readerTwo, 'POST', '/reading/claims', { queueToken: tokens.tokenFor(READER_TWO, overdue.id) });
    });

    it('gives it to the first, and the session is in reading', () => {
      expect(first.status).toBe(201);
      expect(first.body).toMatchObject({ kind: 'first', status: 'in-progress', version: 1 });
      expect(readRow(first.body.readId)).toMatchObject({ sessionId: overdue.id, readerId: READER_ONE });
      expect(sessionRow(overdue.id).status).toBe('in-reading');
    });

    it('refuses the second with 409 already-claimed, without naming who has it', () => {
      expect(second.status).toBe(409);
      expect(second.body.error.code).toBe('already-claimed');
      expect(second.body.error.message).toMatch(/another reader has already claimed this session/i);
      const readerOneUser = DEMO_USERS.find((user) => user.id === READER_ONE)!;
      expect(second.body.error.message).not.toContain(readerOneUser.name);
      expect(JSON.stringify(second.body)).not.toContain(readerOneUser.email);
    });

    it('takes the session out of both queues', async () => {
      const one = (await call<QueuePage>(readerOne, 'GET', '/reading/queue')).body;
      const two = (await call<QueuePage>(readerTwo, 'GET', '/reading/queue')).body;
      expect(one.items.map((item) => item.queueToken)).not.toContain(tokens.tokenFor(READER_ONE, overdue.id));
      expect(two.items.map((item) => item.queueToken)).not.toContain(tokens.tokenFor(READER_TWO, overdue.id));
    });
  });
});

describe('a read from claim to final', () => {
  let session: SessionFacts;
  let workspace: ReadWorkspace;

  beforeAll(async () => {
    session = freshCheckedSession();
    const claimed = await claim(readerOne, READER_ONE, session.id);
    expect(claimed.status).toBe(201);
    workspace = claimed.body;
  });

  it("opens a blinded workspace with the engine's suggestions pre-filled and the engine's grades", () => {
    expect(workspace.blindCode).toMatch(/^R-[A-Z2-9]{4}-[A-Z2-9]{4}$/);
    expect(workspace.efforts.length).toBeGreaterThanOrEqual(3);
    expect(workspace.efforts.map((effort) => effort.label)).toEqual(workspace.efforts.map((effort) => `Effort ${effort.index + 1}`));
    expect(workspace.verdicts.map((verdict) => [verdict.effortIndex, verdict.fev1Verdict, verdict.fvcVerdict])).toEqual(
      workspace.efforts.map((effort) => [effort.index, effort.suggestedFev1Verdict, effort.suggestedFvcVerdict]),
    );
    // Suggestions unchanged: the read's result is the engine's first pass (ATS/ERS 2019 grading, same rules).
    expect([workspace.result.fev1Grade, workspace.result.fvcGrade]).toEqual([session.fev1Grade, session.fvcGrade]);
    expect(workspace.signature).toBeNull();
    expect(workspace.protocolRuleSet).toMatchObject({ id: DEMO_STUDY.protocolRuleSetId });
  });

  it('serves the curves labelled "Effort n"', async () => {
    const { status, body } = await call<SessionCurves>(readerOne, 'GET', `/reads/${workspace.readId}/curves`);
    expect(status).toBe(200);
    expect(body.efforts.map((effort) => effort.label)).toEqual(workspace.efforts.map((effort) => effort.label));
  });

  it('shows the read to its owner only', async () => {
    expect((await call<ErrorBody>(readerTwo, 'GET', `/reads/${workspace.readId}`)).status).toBe(404);
    expect((await call<ErrorBody>(readerTwo, 'PUT', `/reads/${workspace.readId}`, formOf(workspace))).status).toBe(404);
    const mine = (await call<MyRead[]>(readerOne, 'GET', '/reads')).body;
    expect(mine.find((read) => read.readId === workspace.readId)).toMatchObject({ status: 'in-progress', signedAt: null });
  });

  it('saves an override, recomputes the result and audits old and new values with the override flagged', async () => {
    const changed = workspace.verdicts.map((verdict, position) =>
      position === 0 ? { ...verdict, fev1Verdict: otherThan(verdict.fev1Verdict) as typeof verdict.fev1Verdict, comment: 'Slow start' } : verdict,
    );
    const { status, body } = await call<ReadWorkspace>(readerOne, 'PUT', `/reads/${workspace.readId}`, formOf(workspace, { verdicts: changed, feedbackText: 'Coach a faster start.' }));
    expect(status).toBe(200);
    expect(body.version).toBe(2);
    expect(body.verdicts[0]).toMatchObject({ fev1Verdict: changed[0].fev1Verdict, comment: 'Slow start' });
    expect(body.feedbackText).toBe('Coach a faster start.');
    const save = auditOf(workspace.readId).find((row) => row.action === 'save')!;
    expect(save).toMatchObject({ userId: READER_ONE, role: 'over-reader' });
    expect(JSON.parse(save.oldValue!)).toMatchObject({ version: 1, verdicts: [{ effortIndex: 0, fev1Verdict: workspace.verdicts[0].fev1Verdict }] });
    expect(JSON.parse(save.newValue!)).toMatchObject({
      version: 2,
      feedbackText: 'Coach a faster start.',
      verdicts: [
        {
          effortIndex: 0,
          fev1Verdict: changed[0].fev1Verdict,
          overridesEngine: { effortIndex: 0, fev1: { suggested: workspace.efforts[0].suggestedFev1Verdict, chosen: changed[0].fev1Verdict } },
        },
      ],
    });
    workspace = body;
  });

  it('refuses a stale form with 409 stale-read listing what differs, and keeps the saved read', async () => {
    const staleForm = formOf(workspace, { version: 1, verdicts: workspace.verdicts.map((verdict, position) => (position === 0 ? { ...verdict, comment: 'Other tab' } : verdict)) });
    const { status, body } = await call<ErrorBody>(readerOne, 'PUT', `/reads/${workspace.readId}`, staleForm);
    expect(status).toBe(409);
    expect(body.error.code).toBe('stale-read');
    expect(body.error.message).toContain('Effort 1 comment');
    expect(body.error.details).toEqual({
      currentVersion: 2,
      changed: [{ field: 'Effort 1 comment', effortIndex: 0, saved: 'Slow start', yours: 'Other tab' }],
    });
    expect((await call<ReadWorkspace>(readerOne, 'GET', `/reads/${workspace.readId}`)).body.verdicts[0].comment).toBe('Slow start');
  });

  it.each([
    { name: 'an effort index that is not in the read', effortIndex: 99, code: 'effort-unknown', message: /Effort 100 .*is not an effort of this read/ },
    { name: 'the same effort twice', effortIndex: 0, code: 'effort-duplicate', message: /Effort 1 has two verdicts/ },
  ])('refuses a verdict on $name with 422 and saves nothing', async ({ effortIndex, code, message }) => {
    const verdicts = [...workspace.verdicts, { ...workspace.verdicts[0], effortIndex }];
    const { status, body } = await call<ErrorBody>(readerOne, 'PUT', `/reads/${workspace.readId}`, formOf(workspace, { verdicts }));
    expect(status).toBe(422);
    expect(body.error.code).toBe(code);
    expect(body.error.message).toMatch(message);
    expect((await call<ReadWorkspace>(readerOne, 'GET', `/reads/${workspace.readId}`)).body.version).toBe(2);
  });

  it('refuses an unknown finding code with 422 naming it', async () => {
    const verdicts = workspace.verdicts.map((verdict, position) => (position === 1 ? { ...verdict, findings: ['blew-into-the-wrong-end'] } : verdict));
    const { status, body } = await call<ErrorBody>(readerOne, 'PUT', `/reads/${workspace.readId}`, formOf(workspace, { verdicts }));
    expect(status).toBe(422);
    expect(body.error).toMatchObject({ code: 'finding-unknown' });
    expect(body.error.message).toContain('"blew-into-the-wrong-end"');
  });

  it('signs within five minutes of the password login, and the single-design session becomes final', async () => {
    const { status, body } = await call<ReadWorkspace>(readerOne, 'POST', `/reads/${workspace.readId}/sign`, { version: 2, meaning: 'authored' });
    expect(status).toBe(200);
    expect(body.status).toBe('signed');
    expect(body.signature).toMatchObject({ printedName: 'Dr Ilse Vandermeer', meaning: 'authored', valid: true });
    expect(body.signature!.signedAt).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/);
    const after = sessionRow(session.id);
    expect(after.status).toBe('final');
    expect(after.feedbackReleasedAt).toBe(body.signature!.signedAt);
    workspace = body;
  });

  it('audits claim, save and sign with the overrides, and the session finalisation; the chain verifies', () => {
    const rows = auditOf(workspace.readId);
    expect(rows.map((row) => row.action)).toEqual(['claim', 'save', 'sign']);
    const sign = JSON.parse(rows[2].newValue!) as { signatureId: string; meaning: string; overridesEngine: unknown[]; contentHash: string };
    expect(sign).toMatchObject({ meaning: 'authored', signatureId: expect.any(String), contentHash: expect.stringMatching(/^[0-9a-f]{64}$/) });
    expect(sign.overridesEngine).toEqual([
      { effortIndex: 0, fev1: { suggested: workspace.efforts[0].suggestedFev1Verdict, chosen: workspace.verdicts[0].fev1Verdict } },
    ]);
    const sessionActions = auditOf(session.id).map((row) => row.action);
    expect(sessionActions.slice(-2)).toEqual(['start-reading', 'finalise']);
    expect(tidemark.services.audit.verify()).toMatchObject({ ok: true });
  });

  it('refuses any change to a signed read', async () => {
    const { status, body } = await call<ErrorBody>(readerOne, 'PUT', `/reads/${workspace.readId}`, formOf(workspace));
    expect(status).toBe(409);
    expect(body.error.code).toBe('read-signed');
  });
});

describe('release', () => {
  it('withdraws the read, audits it and puts the session back in the queue', async () => {
    const session = freshCheckedSession();
    const { body: workspace } = await claim(readerTwo, READER_TWO, session.id);
    const released = await call<undefined>(readerTwo, 'POST', `/reads/${workspace.readId}/release`);
    expect(released.status).toBe(204);
    expect(readRow(workspace.readId).status).toBe('withdrawn');
    expect(sessionRow(session.id).status).toBe('checked');
    expect(auditOf(workspace.readId).map((row) => row.action)).toEqual(['claim', 'release']);
    const queue = (await call<QueuePage>(readerOne, 'GET', '/reading/queue')).body;
    expect(queue.items.map((item) => item.queueToken)).toContain(tokens.tokenFor(READER_ONE, session.id));
    // The same reader may claim it again after giving it back.
    expect((await claim(readerTwo, READER_TWO, session.id)).status).toBe(201);
  });
});

describe('a locked session', () => {
  let session: SessionFacts;
  let workspace: ReadWorkspace;
  const lockId = randomUUID();

  beforeAll(async () => {
    session = freshCheckedSession();
    workspace = (await claim(readerOne, READER_ONE, session.id)).body;
    db()
      .prepare(
        `insert into data_locks (id, study_id, scope, scope_id, reason, locked_by, locked_at) values (?, ?, 'session', ?, 'Interim analysis freeze', 'user-data-manager', ?)`,
      )
      .run(lockId, DEMO_STUDY.id, session.id, new Date().toISOString());
  });
  afterAll(() => {
    db().prepare(`update data_locks set unlocked_at = ?, unlocked_by = 'user-data-manager', unlock_reason = 'test over' where id = ?`).run(new Date().toISOString(), lockId);
  });

  it.each([
    { action: 'save', method: 'PUT', path: '', body: () => formOf(workspace, { feedbackText: 'Changed while locked' }) },
    { action: 'sign', method: 'POST', path: '/sign', body: () => ({ version: workspace.version, meaning: 'authored' }) },
    { action: 'release', method: 'POST', path: '/release', body: () => undefined },
  ])('refuses to $action with 409 locked and the lock reason, naming no subject', async ({ method, path, body }) => {
    const response = await call<ErrorBody>(readerOne, method, `/reads/${workspace.readId}${path}`, body());
    expect(response.status).toBe(409);
    expect(response.body.error.code).toBe('locked');
    expect(response.body.error.message).toContain('Interim analysis freeze');
    const read = (await call<ReadWorkspace>(readerOne, 'GET', `/reads/${workspace.readId}`)).body;
    expect(read).toMatchObject({ status: 'in-progress', version: 1, feedbackText: '' });
  });

  it('is not offered in the queue', async () => {
    const queue = (await call<QueuePage>(readerTwo, 'GET', '/reading/queue')).body;
    expect(queue.items.map((item) => item.queueToken)).not.toContain(tokens.tokenFor(READER_TWO, session.id));
  });
});

describe('a dual-read design', () => {
  let session: SessionFacts;
  let first: ReadWorkspace;

  beforeAll(async () => {
    db().prepare(`update studies set read_design = 'dual-all' where id = ?`).run(DEMO_STUDY.id);
    session = freshCheckedSession();
    first = (await claim(readerOne, READER_ONE, session.id)).body;
  });
  afterAll(() => {
    db().prepare(`update studies set read_design = 'single' where id = ?`).run(DEMO_STUDY.id);
  });

  it('decides at the first claim that the session is read twice', () => {
    expect(first.kind).toBe('first');
    expect(sessionRow(session.id)).toMatchObject({ status: 'in-reading', dualRead: 1 });
  });

  it('never gives the session to the same reader again, but offers it to another as the second read', async () => {
    const mine = (await call<QueuePage>(readerOne, 'GET', '/reading/queue')).body;
    expect(mine.items.map((item) => item.queueToken)).not.toContain(tokens.tokenFor(READER_ONE, session.id));
    const again = await claim(readerOne, READER_ONE, session.id);
    expect(again.status).toBe(409);
    expect((again.body as unknown as ErrorBody).error.code).toBe('already-yours');
    const theirs = (await call<QueuePage>(readerTwo, 'GET', '/reading/queue')).body;
    expect(theirs.items.find((item) => item.queueToken === tokens.tokenFor(READER_TWO, session.id))).toMatchObject({ kind: 'second' });
  });

  it('takes a second read and then refuses a third reader', async () => {
    const second = await claim(readerTwo, READER_TWO, session.id);
    expect(second.status).toBe(201);
    expect(second.body.kind).toBe('second');
    expect(second.body.blindCode).not.toBe(first.blindCode);
    const third = await claim(adjudicator, ADJUDICATOR, session.id);
    expect(third.status).toBe(409);
    expect((third.body as unknown as ErrorBody).error).toMatchObject({ code: 'already-claimed', message: expect.stringMatching(/both reads/i) });
  });

  it('does not make the session final on the first signed read', async () => {
    const signed = await call<ReadWorkspace>(readerOne, 'POST', `/reads/${first.readId}/sign`, { version: 1, meaning: 'authored' });
    expect(signed.status).toBe(200);
    expect(sessionRow(session.id).status).toBe('in-reading');
  });
});

describe('blinding of everything readers received', () => {
  it('names no site, subject, session, file, test date, technician, device or other person', () => {
    const sessions = db()
      .prepare(
        `select s.id, s.tested_at as testedAt, s.registered_at as registeredAt, s.technician_code as technicianCode,
                s.device_serial_number as serial, subj.code as subjectCode
           from test_sessions s join subjects subj on subj.id = s.subject_id where s.study_id = ?`,
      )
      .all(DEMO_STUDY.id) as { id: string; testedAt: string; registeredAt: string; technicianCode: string; serial: string | null; subjectCode: string }[];
    const files = db().prepare(`select id, original_name as originalName from uploads where study_id = ?`).all(DEMO_STUDY.id) as {
      id: string;
      originalName: string;
    }[];
    const forbidden = new Set<string>([
      ...DEMO_SITES.flatMap((site) => [site.id, site.name]),
      ...sessions.flatMap((row) => [row.id, row.testedAt, row.registeredAt, row.technicianCode, row.subjectCode, ...(row.serial ? [row.serial] : [])]),
      ...files.flatMap((file) => [file.id, file.originalName]),
      ...DEMO_USERS.filter((user) => !user.roles.some((role) => role.role === 'over-reader')).flatMap((user) => [user.name, user.email]),
    ]);
    expect(readerBodies.length).toBeGreaterThan(20);
    const leaks = [...forbidden].filter((value) => readerBodies.some((body) => body.includes(value)));
    expect(leaks).toEqual([]);
  });
});
