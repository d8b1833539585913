/**
 * Dual reading end to end: the real app on a real SQLite file with the demo study switched to the
 * dual-all design, readers and the adjudicator signed in through the local identity provider.
 * Two agreeing reads finalise a session; disagreeing reads send it to the adjudicator, who sees
 * both reads as "Read A" and "Read B" (no names, blinded), re-authenticates and signs the final
 * read. Reader agreement is checked against a hand count of the same verdicts.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import type { AdjudicationView, Agreement, EffortVerdict, QueuePage, ReadWorkspace } from '../../shared/contracts/reading.js';
import { AdjudicationRepository } from '../../server/reading/adjudication-repository.js';
import { QueueTokens } from '../../server/reading/queue-token.js';
import { DEMO_PASSWORD, DEMO_SITES, DEMO_STUDY, DEMO_USERS } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };
interface ErrorBody {
  error: { code: string; message: string };
}

let tidemark: Running;
let readerOne: Caller;
let readerTwo: Caller;
let adjudicator: Caller;
let monitor: Caller;
let dataManager: Caller;
let tokens: QueueTokens;
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
const READER_ONE = 'user-reader-1';
const READER_TWO = 'user-reader-2';
const ADJUDICATOR = 'user-adjudicator';
const nameOf = (id: string) => DEMO_USERS.find((user) => user.id === id)!.name;
const db = () => tidemark.deps.db.$client;

/** Everything the adjudicator received, for the blinding check. */
const adjudicatorBodies: string[] = [];

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  tokens = new QueueTokens(tidemark.dataDir);
  [readerOne, readerTwo, adjudicator, monitor, dataManager] = await Promise.all(
    ['reader.one', 'reader.two', 'adjudicator', 'monitor', 'data.manager'].map((name) => signIn(tidemark.url, `${name}@tidemark.example`)),
  );
  db().prepare(`update studies set read_design = 'dual-all' where id = ?`).run(DEMO_STUDY.id);
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
  if (caller === adjudicator) adjudicatorBodies.push(text);
  return { status: response.status, body: (text ? JSON.parse(text) : undefined) as T, text };
}

const usedSessions = new Set<string>();
function freshCheckedSession(): string {
  const rows = db().prepare(`select id from test_sessions where study_id = ? and status = 'checked' order by id`).all(DEMO_STUDY.id) as { id: string }[];
  const row = rows.find((candidate) => !usedSessions.has(candidate.id));
  if (!row) throw new Error('No unused checked session left');
  usedSessions.add(row.id);
  return row.id;
}

const sessionStatus = (sessionId: string) =>
  (db().prepare(`select status from test_sessions where id = ?`).get(sessionId) as { status: string }).status;

function sessionAudit(sessionId: string) {
  return (
    db()
      .prepare(`select action, role, new_value as newValue from audit_events where entity = 'session' and entity_id = ? order by sequence`)
      .all(sessionId) as { action: string; role: string; newValue: string }[]
  ).map((row) => ({ ...row, newValue: JSON.parse(row.newValue) as Record<string, unknown> }));
}

async function claimRead(caller: Caller, userId: string, sessionId: string): Promise<ReadWorkspace> {
  const { status, body } = await call<ReadWorkspace>(caller, 'POST', '/reading/claims', { queueToken: tokens.tokenFor(userId, sessionId) });
  expect(status).toBe(201);
  return body;
}

async function saveVerdicts(caller: Caller, workspace: ReadWorkspace, verdicts: EffortVerdict[]): Promise<ReadWorkspace> {
  const { status, body } = await call<ReadWorkspace>(caller, 'PUT', `/reads/${workspace.readId}`, {
    version: workspace.version,
    verdicts,
    feedbackText: workspace.feedbackText,
  });
  expect(status).toBe(200);
  return body;
}

async function sign(caller: Caller, workspace: ReadWorkspace) {
  return call<ReadWorkspace>(caller, 'POST', `/reads/${workspace.readId}/sign`, { version: workspace.version, meaning: 'authored' });
}

async function signOk(caller: Caller, workspace: ReadWorkspace): Promise<ReadWorkspace> {
  const { status, body } = await sign(caller, workspace);
  expect(status).toBe(200);
  return body;
}

const otherThan = (verdict: string) => (verdict === 'acceptable' ? 'usable' : 'acceptable');
const words = (verdict: string) => verdict.replace('_', ' ');

/** The engine's suggestions with one verdict of effort 0 turned to another category. */
function withEffortOneChanged(workspace: ReadWorkspace, key: 'fev1Verdict' | 'fvcVerdict'): EffortVerdict[] {
  return workspace.verdicts.map((verdict) => (verdict.effortIndex === 0 ? { ...verdict, [key]: otherThan(verdict[key]) } : verdict));
}

/**
 * Confirms identity before signing as a browser does: GET /auth/reauthenticate, the identity
 * provider's login form (a fresh password entry forced with prompt=login), then the callback.
 * Returns how many times the password form was posted and where the app sent the browser back.
 */
async function reauthenticate(caller: Caller, email: string, returnTo: string): Promise<{ passwordPosts: number; back: string }> {
  let response = await caller.client.fetch(`${tidemark.url}/auth/reauthenticate?returnTo=${encodeURIComponent(returnTo)}`);
  expect(response.status).toBe(303);
  let location = new URL(response.headers.get('location')!, tidemark.url).href;
  let passwordPosts = 0;
  for (let hop = 0; hop < 10 && !(location.startsWith(tidemark.url) && location.includes('/auth/callback')); hop++) {
    if (location.includes('/interaction/')) {
      await caller.client.fetch(location);
      response = await caller.client.fetch(`${location}/login`, {
        method: 'POST',
        headers: { 'content-type': 'application/x-www-form-urlencoded' },
        body: new URLSearchParams({ email, password: DEMO_PASSWORD }).toString(),
      });
      passwordPosts++;
    } else {
      response = await caller.client.fetch(location);
    }
    location = new URL(response.headers.get('location')!, response.url || location).href;
  }
  const callback = await caller.client.fetch(location);
  return { passwordPosts, back: callback.headers.get('location') ?? '' };
}

// Sessions: S1 agrees (reader one, reader two), S2 disagrees (reader one, reader two),
// S3 disagrees (reader one, and the adjudicator acting as over-reader).
const reads: Record<'s1' | 's2' | 's3', { sessionId: string; first: ReadWorkspace; second: ReadWorkspace }> = {} as never;

describe('two reads that agree', () => {
  it('make the session final, the earlier signed read being the final read', async () => {
    const sessionId = freshCheckedSession();
    const first = await claimRead(readerOne, READER_ONE, sessionId);
    const second = await claimRead(readerTwo, READER_TWO, sessionId);
    expect([first.kind, second.kind]).toEqual(['first', 'second']);
    const signedFirst = await signOk(readerOne, first);
    expect(sessionStatus(sessionId)).toBe('in-reading');
    const signedSecond = await signOk(readerTwo, second);
    expect(sessionStatus(sessionId)).toBe('final');
    reads.s1 = { sessionId, first: signedFirst, second: signedSecond };

    const finalise = sessionAudit(sessionId).find((row) => row.action === 'finalise')!;
    expect(finalise.role).toBe('system');
    expect(finalise.newValue).toMatchObject({
      status: 'final',
      finalReadId: first.readId,
      decidedBy: 'agreement',
      comparedReadIds: [first.readId, second.readId],
    });
    expect(new AdjudicationRepository(tidemark.deps.db).finalReadOf(sessionId)?.id).toBe(first.readId);
  });
});

describe('two reads that disagree', () => {
  it('send the session to adjudication with the differences in plain words', async () => {
    const sessionId = freshCheckedSession();
    const first = await claimRead(readerOne, READER_ONE, sessionId);
    let second = await claimRead(readerTwo, READER_TWO, sessionId);
    second = await saveVerdicts(readerTwo, second, withEffortOneChanged(second, 'fvcVerdict'));
    reads.s2 = { sessionId, first: await signOk(readerOne, first), second: await signOk(readerTwo, second) };
    expect(sessionStatus(sessionId)).toBe('adjudication');
    const sent = sessionAudit(sessionId).find((row) => row.action === 'send-to-adjudication')!;
    const expectedLine = `Effort 1 FVC: Read A ${words(first.verdicts[0].fvcVerdict)}, Read B ${words(second.verdicts[0].fvcVerdict)}`;
    expect(sent.newValue['differences']).toEqual(expect.arrayContaining([expectedLine]));
    expect(new AdjudicationRepository(tidemark.deps.db).finalReadOf(sessionId)).toBeUndefined();
  });

  it('never gives a reader a session they already read', async () => {
    for (const [caller, userId] of [
      [readerOne, READER_ONE],
      [readerTwo, READER_TWO],
    ] as const) {
      const queue = (await call<QueuePage>(caller, 'GET', '/reading/queue')).body;
      const tokensShown = queue.items.map((item) => item.queueToken);
      for (const session of [reads.s1, reads.s2]) expect(tokensShown).not.toContain(tokens.tokenFor(userId, session.sessionId));
    }
    const again = await call<ErrorBody>(readerOne, 'POST', '/reading/claims', { queueToken: tokens.tokenFor(READER_ONE, reads.s1.sessionId) });
    expect(again.status).toBe(409);
  });

  it('keeps a session the adjudicator read themselves out of their adjudication queue', async () => {
    const sessionId = freshCheckedSession();
    const first = await claimRead(readerOne, READER_ONE, sessionId);
    let second = await claimRead(adjudicator, ADJUDICATOR, sessionId);
    second = await saveVerdicts(adjudicator, second, withEffortOneChanged(second, 'fev1Verdict'));
    reads.s3 = { sessionId, first: await signOk(readerOne, first), second: await signOk(adjudicator, second) };
    expect(sessionStatus(sessionId)).toBe('adjudication');

    const queue = (await call<QueuePage>(adjudicator, 'GET', '/adjudication/queue')).body;
    expect(queue.total).toBe(1);
    expect(queue.items[0]).toMatchObject({ kind: 'adjudication', dueAt: reads.s2.first.dueAt });
    // Even with the right token in hand, the claim is refused.
    const own = await call<ErrorBody>(adjudicator, 'POST', '/adjudication/claims', {
      queueToken: tokens.tokenFor(ADJUDICATOR, `adjudication:${sessionId}`),
    });
    expect(own.status).toBe(409);
    expect(own.body.error.code).toBe('was-reader');
  });

  it('refuses the adjudication queue to a reader without the adjudicator role', async () => {
    const { status, body } = await call<ErrorBody>(readerOne, 'GET', '/adjudication/queue');
    expect(status).toBe(403);
    expect(body.error.message).toContain('adjudicator');
  });
});

describe('the adjudication', () => {
  let view: AdjudicationView;

  it('opens an adjudication read with the engine suggestions beside Read A and Read B', async () => {
    const queue = (await call<QueuePage>(adjudicator, 'GET', '/adjudication/queue')).body;
    const { status, body } = await call<AdjudicationView>(adjudicator, 'POST', '/adjudication/claims', { queueToken: queue.items[0].queueToken });
    expect(status).toBe(201);
    view = body;
    expect(view.workspace.kind).toBe('adjudication');
    expect(view.workspace.status).toBe('in-progress');
    expect(view.workspace.verdicts.map((verdict) => [verdict.fev1Verdict, verdict.fvcVerdict])).toEqual(
      view.workspace.efforts.map((effort) => [effort.suggestedFev1Verdict, effort.suggestedFvcVerdict]),
    );
    expect(view.compared.map((read) => read.label)).toEqual(['Read A', 'Read B']);
    expect(view.compared[0].verdicts).toEqual(reads.s2.first.verdicts);
    expect(view.compared[1].verdicts).toEqual(reads.s2.second.verdicts);
    expect(view.compared[0].result).toEqual(reads.s2.first.result);
    expect(view.differences[0]).toMatch(/^Effort 1 FVC: Read A .+, Read B .+$/);
    expect((await call<QueuePage>(adjudicator, 'GET', '/adjudication/queue')).body.total).toBe(0);
  });

  it('shows the same view again to its owner only', async () => {
    const again = await call<AdjudicationView>(adjudicator, 'GET', `/adjudications/${view.workspace.readId}`);
    expect(again.status).toBe(200);
    expect(again.body.differences).toEqual(view.differences);
    expect((await call<ErrorBody>(readerOne, 'GET', `/adjudications/${view.workspace.readId}`)).status).toBe(403);
    // A first or second read is not an adjudication, even the adjudicator's own.
    expect((await call<ErrorBody>(adjudicator, 'GET', `/adjudications/${reads.s3.second.readId}`)).status).toBe(404);
  });

  it('names no reader, site, subject, session, file or date in what the adjudicator receives', () => {
    const sessions = db()
      .prepare(
        `select s.id, s.tested_at as testedAt, s.technician_code as technicianCode, subj.code as subjectCode
           from test_sessions s join subjects subj on subj.id = s.subject_id where s.study_id = ?`,
      )
      .all(DEMO_STUDY.id) as { id: string; testedAt: string; technicianCode: string; subjectCode: string }[];
    const files = db().prepare(`select id, original_name as originalName from uploads where study_id = ?`).all(DEMO_STUDY.id) as {
      id: string;
      originalName: string;
    }[];
    const forbidden = [
      ...DEMO_SITES.flatMap((site) => [site.id, site.name]),
      ...sessions.flatMap((row) => [row.id, row.testedAt, row.technicianCode, row.subjectCode]),
      ...files.flatMap((file) => [file.id, file.originalName]),
      ...[READER_ONE, READER_TWO].flatMap((id) => [id, nameOf(id), DEMO_USERS.find((user) => user.id === id)!.email]),
      reads.s2.first.readId,
      reads.s2.second.readId,
      reads.s2.first.blindCode,
      reads.s2.second.blindCode,
    ];
    const adjudicationBodies = adjudicatorBodies.filter((body) => body.includes('"compared"'));
    expect(adjudicationBodies.length).toBeGreaterThanOrEqual(2);
    expect(forbidden.filter((value) => adjudicationBodies.some((body) => body.includes(value)))).toEqual([]);
  });

  it('refuses a second claim on the same session', async () => {
    const token = tokens.tokenFor(ADJUDICATOR, `adjudication:${reads.s2.sessionId}`);
    const { status, body } = await call<ErrorBody>(adjudicator, 'POST', '/adjudication/claims', { queueToken: token });
    expect(status).toBe(409);
    expect(body.error.code).toBe('already-claimed');
  });

  it('asks for a fresh password entry when the login is older than five minutes, then signs the final read', async () => {
    // Side with Read A on the disputed verdict.
    const saved = await saveVerdicts(adjudicator, view.workspace, reads.s2.first.verdicts);
    db()
      .prepare(`update auth_sessions set auth_time = ? where user_id = ? and ended_at is null`)
      .run(new Date(Date.now() - 10 * 60_000).toISOString(), ADJUDICATOR);
    const stale = await sign(adjudicator, saved);
    expect(stale.status).toBe(401);
    expect((stale.body as unknown as ErrorBody).error.code).toBe('reauthentication-required');
    expect(sessionStatus(reads.s2.sessionId)).toBe('adjudication');

    const { passwordPosts, back } = await reauthenticate(adjudicator, 'adjudicator@tidemark.example', '/adjudication');
    expect(passwordPosts).toBe(1);
    expect(back).toBe('/adjudication?reauthentication=confirmed');

    const signed = await signOk(adjudicator, saved);
    expect(signed.signature).toMatchObject({ printedName: nameOf(ADJUDICATOR), meaning: 'authored', valid: true });
    expect(sessionStatus(reads.s2.sessionId)).toBe('final');
    const finalise = sessionAudit(reads.s2.sessionId).find((row) => row.action === 'finalise')!;
    expect(finalise.newValue).toMatchObject({ status: 'final', finalReadId: saved.readId, decidedBy: 'adjudication' });
    expect(new AdjudicationRepository(tidemark.deps.db).finalReadOf(reads.s2.sessionId)?.id).toBe(saved.readId);
    expect(tidemark.services.audit.verify()).toMatchObject({ ok: true });
  });
});

describe('reader agreement', () => {
  /** The hand count: every effort gives an FEV1 and an FVC verdict pair; every session two grade pairs. */
  function handCount(sessions: { first: ReadWorkspace; second: ReadWorkspace }[]) {
    const categories = ['acceptable', 'usable', 'not_acceptable'];
    const table = categories.map(() => categories.map(() => 0));
    let gradePairs = 0;
    let gradeMatches = 0;
    for (const { first, second } of sessions) {
      for (const verdict of first.verdicts) {
        const other = second.verdicts.find((candidate) => candidate.effortIndex === verdict.effortIndex)!;
        table[categories.indexOf(verdict.fev1Verdict)][categories.indexOf(other.fev1Verdict)]++;
        table[categories.indexOf(verdict.fvcVerdict)][categories.indexOf(other.fvcVerdict)]++;
      }
      gradePairs += 2;
      if (first.result.fev1Grade === second.result.fev1Grade) gradeMatches++;
      if (first.result.fvcGrade === second.result.fvcGrade) gradeMatches++;
    }
    const total = table.flat().reduce((sum, cell) => sum + cell, 0);
    const observed = (table[0][0] + table[1][1] + table[2][2]) / total;
    const rowSum = (i: number) => table[i][0] + table[i][1] + table[i][2];
    const columnSum = (j: number) => table[0][j] + table[1][j] + table[2][j];
    const expected = (rowSum(0) * columnSum(0) + rowSum(1) * columnSum(1) + rowSum(2) * columnSum(2)) / (total * total);
    return {
      verdictPairs: total,
      percentAgreement: observed * 100,
      kappa: expected === 1 ? null : (observed - expected) / (1 - expected),
      gradeAgreementPercent: (gradeMatches / gradePairs) * 100,
    };
  }

  it('matches a hand count of the verdicts, overall and per reader pair, with the readers named', async () => {
    const { status, body } = await call<Agreement>(monitor, 'GET', '/reading/agreement');
    expect(status).toBe(200);
    const all = handCount([reads.s1, reads.s2, reads.s3]);
    const efforts = (session: { first: ReadWorkspace }) => session.first.verdicts.length;
    expect(body.comparedSessions).toBe(3);
    expect(body.comparedEfforts).toBe(efforts(reads.s1) + efforts(reads.s2) + efforts(reads.s3));
    expect(all.verdictPairs).toBe(2 * body.comparedEfforts);
    // Exactly two of all verdict pairs differ: S2 effort 1 FVC and S3 effort 1 FEV1.
    expect(body.percentAgreement).toBeCloseTo(((all.verdictPairs - 2) / all.verdictPairs) * 100, 9);
    expect(body.percentAgreement).toBeCloseTo(all.percentAgreement, 9);
    expect(body.kappa).toBeCloseTo(all.kappa!, 9);
    expect(body.gradeAgreementPercent).toBeCloseTo(all.gradeAgreementPercent, 9);

    const oneTwo = handCount([reads.s1, reads.s2]);
    const oneAdjudicator = handCount([reads.s3]);
    const pairOf = (a: string, b: string) => body.pairs.find((pair) => pair.readerA === a && pair.readerB === b);
    expect(body.pairs).toHaveLength(2);
    expect(pairOf(nameOf(ADJUDICATOR), nameOf(READER_ONE))).toMatchObject({
      comparedEfforts: efforts(reads.s3),
      percentAgreement: expect.closeTo(oneAdjudicator.percentAgreement, 9),
    });
    expect(pairOf(nameOf(READER_ONE), nameOf(READER_TWO))).toMatchObject({
      comparedEfforts: efforts(reads.s1) + efforts(reads.s2),
      percentAgreement: expect.closeTo(oneTwo.percentAgreement, 9),
    });
    expect(pairOf(nameOf(READER_ONE), nameOf(READER_TWO))!.kappa ?? null).toEqual(oneTwo.kappa === null ? null : expect.closeTo(oneTwo.kappa, 9));
  });

  it('is open to the data manager and closed to readers and the adjudicator', async () => {
    expect((await call<Agreement>(dataManager, 'GET', '/reading/agreement')).status).toBe(200);
    for (const caller of [readerOne, adjudicator]) {
      const { status, body } = await call<ErrorBody>(caller, 'GET', '/reading/agreement');
      expect(status).toBe(403);
      expect(body.error.code).toBe('forbidden');
    }
  });
});
