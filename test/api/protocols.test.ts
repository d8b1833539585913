/**
 * Rule sets and replays through the real app (SQLite file, S3 fake, identity provider on loopback).
 * Replay counts are checked against the engine run directly in this file on the same stored
 * originals, so that the service's bookkeeping, not the engine, is under test.
 */
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { strToU8 } from 'fflate';
import { pino } from 'pino';
import type { ReplayResult, RuleSetComparison, RuleSetDetail, RuleSetSummary } from '../../shared/contracts/protocols.js';
import type { Schedule, SessionDetail } from '../../shared/contracts/sessions.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import { analyzeSession } from '../../shared/spirometry/session-analysis.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession, type EffortSpec } from '../../shared/spirometry/synthetic/curve-generator.js';
import { StudyRepository } from '../../server/studies/study-repository.js';
import { AppError } from '../../server/http/app-error.js';
import { PROTOCOLS_DIR, loadProtocol } from '../../server/protocols/protocol-catalogue.js';
import { ProtocolService } from '../../server/protocols/protocol-service.js';
import { ReplayRepository } from '../../server/replay/replay-repository.js';
import { ReplayService } from '../../server/replay/replay-service.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { decodeSessionFile } from '../../server/uploads/session-file-decoder.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type SignedIn = { client: CookieClient; csrfToken: string };

/** Below this many checked sessions (the demo seed not filled in yet), the test uploads its own. */
const MIN_CHECKED_SESSIONS = 6;

let tidemark: Running;
let admin: SignedIn;
let dataManager: SignedIn;
let reader: SignedIn;
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
const standardFile = path.join(PROTOCOLS_DIR, 'ats-ers-2019.v1.json');
const standardRuleSet = JSON.parse(readFileSync(standardFile, 'utf8')) as { id: string; version: number; rules: { id: string; value: unknown }[] };

beforeAll(async () => {
  tidemark = await startTidemarkForTest();
  [admin, dataManager, reader] = await Promise.all([
    signIn(tidemark.url, 'admin@tidemark.example'),
    signIn(tidemark.url, 'data.manager@tidemark.example'),
    signIn(tidemark.url, 'reader.one@tidemark.example'),
  ]);
  await ensureCheckedSessions();
});
afterAll(async () => {
  await tidemark?.close();
});

function post(who: SignedIn, url: string, body: unknown) {
  return who.client.fetch(url, {
    method: 'POST',
    headers: { 'content-type': 'application/json', 'x-csrf-token': who.csrfToken },
    body: JSON.stringify(body),
  });
}

async function json<T>(response: Response, status = 200): Promise<T> {
  const body = (await response.json()) as T;
  if (response.status !== status) throw new Error(`expected ${status}, got ${response.status}: ${JSON.stringify(body)}`);
  return body;
}

/** Registers sessions at site 101 and uploads a file for each: some clean, some with faulty efforts. */
async function ensureCheckedSessions(): Promise<void> {
  const missing = MIN_CHECKED_SESSIONS - new ReplayRepository(tidemark.deps.db).checkedSessionsOf(DEMO_STUDY.id).length;
  if (missing <= 0) return;
  const coordinator = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
  const schedule = await json<Schedule>(await coordinator.client.fetch(`${studyUrl()}/schedule`));
  const perEffortFaults: (Partial<EffortSpec> | undefined)[][] = [
    [],
    [undefined, { faults: ['slow-start'] }],
    [undefined, undefined, { faults: ['early-end'] }],
    [{ faults: ['hesitation-long'] }],
  ];
  for (let i = 0; i < missing; i++) {
    const subjectCode = `R101-${String(700 + i)}`;
    expect((await post(coordinator, `${studyUrl()}/sites/site-101/subjects`, { code: subjectCode })).status).toBe(201);
    const session = await json<SessionDetail>(
      await post(coordinator, `${studyUrl()}/sites/site-101/sessions`, {
        subjectCode,
        visitCode: schedule.visits[0].code,
        timepointCode: schedule.timepoints[0].code,
        bronchodilator: 'pre',
        testedAt: '2026-11-20T09:30:00+01:00',
        demographics: { ageYears: 58 + i, heightCm: 170, weightKg: 78, sex: 'female' },
        technicianCode: 'TECH-07',
      }),
      201,
    );
    const efforts = generateSession(
      { efforts: 4, base: { fvcL: 3.1, pefLPerS: 6.4 }, fvcSdL: i % 2 === 0 ? 0.03 : 0.12, perEffort: perEffortFaults[i % perEffortFaults.length] },
      4100 + i,
    ).map((effort) => recordingToSessionEffort(effort.recording));
    const form = new FormData();
    form.append('file', new Blob([strToU8(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts }))]), `replay-${i}.json`);
    const uploaded = await coordinator.client.fetch(`${studyUrl()}/sessions/${session.id}/uploads`, {
      method: 'POST',
      headers: { 'x-csrf-token': coordinator.csrfToken },
      body: form,
    });
    expect(uploaded.status).toBe(201);
  }
}

/** The tallies a replay should report, computed here by decoding each stored original and running the engine twice. */
async function directReplay(current: ResolvedProtocol, target: ResolvedProtocol) {
  const rows = tidemark.deps.db.$client
    .prepare(
      `select s.id, s.age_years as ageYears, u.object_key as objectKey, u.original_name as originalName
         from test_sessions s join uploads u on u.id = s.current_upload_id
        where s.study_id = ? and u.outcome = 'checked' and s.status not in ('awaiting-file', 'rejected')`,
    )
    .all(DEMO_STUDY.id) as { id: string; ageYears: number; objectKey: string; originalName: string }[];
  const { maxExpandedBytes, maxZipEntries, maxCompressionRatio } = tidemark.deps.config.uploads;
  const analyse = (row: (typeof rows)[number], bytes: Buffer, protocol: ResolvedProtocol) => {
    const decoded = decodeSessionFile(row.originalName, bytes, {
      maxExpandedBytes,
      maxEntries: maxZipEntries,
      maxCompressionRatio,
      minSampleRateHz: protocol.engine.minSampleRateHz,
    });
    return analyzeSession(decoded.recordings, protocol, { demographics: { ageYears: row.ageYears } });
  };
  const tally = { sessions: 0, efforts: 0, effortsChanged: 0, gradeChanges: 0, endpointChanges: 0, sessionsChanged: 0, transitions: {} as Record<string, number> };
  for (const row of rows) {
    const bytes = await tidemark.deps.storage.get(row.objectKey);
    const before = analyse(row, bytes, current);
    const after = analyse(row, bytes, target);
    tally.sessions++;
    tally.efforts += before.efforts.length;
    before.efforts.forEach((effort, i) => {
      const changed = after.efforts[i];
      const fev1 = [effort.verdicts.fev1.verdict, changed.verdicts.fev1.verdict];
      const fvc = [effort.verdicts.fvc.verdict, changed.verdicts.fvc.verdict];
      if (fev1[0] !== fev1[1] || fvc[0] !== fvc[1]) tally.effortsChanged++;
      if (fev1[0] !== fev1[1]) tally.transitions[`FEV1 ${fev1[0]}>${fev1[1]}`] = (tally.transitions[`FEV1 ${fev1[0]}>${fev1[1]}`] ?? 0) + 1;
      if (fvc[0] !== fvc[1]) tally.transitions[`FVC ${fvc[0]}>${fvc[1]}`] = (tally.transitions[`FVC ${fvc[0]}>${fvc[1]}`] ?? 0) + 1;
    });
    const gradeChanged = before.fev1.grade !== after.fev1.grade || before.fvc.grade !== after.fvc.grade;
    const endpointChanged = before.endpoint.fev1 !== after.endpoint.fev1 || before.endpoint.fvc !== after.endpoint.fvc;
    if (gradeChanged) tally.gradeChanges++;
    if (endpointChanged) tally.endpointChanges++;
    if (gradeChanged || endpointChanged) tally.sessionsChanged++;
  }
  return tally;
}

function expectCountsToMatch(result: ReplayResult, direct: Awaited<ReturnType<typeof directReplay>>) {
  expect(result.counts).toMatchObject({
    sessionsReplayed: direct.sessions,
    efforts: direct.efforts,
    effortsChanged: direct.effortsChanged,
    sessionsWithGradeChange: direct.gradeChanges,
    sessionsWithEndpointChange: direct.endpointChanges,
    storedVerdictsDiffering: 0,
    storedGradesDiffering: 0,
    sessionsWithProblems: 0,
  });
  expect(Object.fromEntries(result.verdictTransitions.map((t) => [`${t.value} ${t.from}>${t.to}`, t.count]))).toEqual(direct.transitions);
  expect(result.effortChanges).toHaveLength(direct.effortsChanged);
  expect(result.sessionChanges).toHaveLength(direct.sessionsChanged);
}

/** Everything a replay must leave alone, as one comparable snapshot. */
function sessionTables(): string {
  const db = tidemark.deps.db.$client;
  return JSON.stringify([
    db.prepare('select * from test_sessions order by id').all(),
    db.prepare('select * from efforts order by id').all(),
    db.prepare('select * from uploads order by id').all(),
  ]);
}

describe('rule-set catalogue', () => {
  it('lists every rule set to any signed-in user, with its rule count', async () => {
    const list = await json<RuleSetSummary[]>(await reader.client.fetch(`${tidemark.url}/api/protocols`));
    const standard = list.find((entry) => entry.id === 'ats-ers-2019' && entry.version === 1)!;
    expect(standard).toMatchObject({ fileName: 'ats-ers-2019.v1.json', ruleCount: standardRuleSet.rules.length, problem: null });
    expect(standard.title).toMatch(/ATS\/ERS 2019/);
    expect(list.map((entry) => `${entry.id}@${entry.version}`)).toContain('ats-ers-2019-endpoint-strict@1');
  });

  it('shows one version with every rule: value, unit, source and status', async () => {
    const detail = await json<RuleSetDetail>(await reader.client.fetch(`${tidemark.url}/api/protocols/ats-ers-2019/versions/1`));
    expect(detail.rules.map((rule) => rule.id)).toEqual(standardRuleSet.rules.map((rule) => rule.id));
    // Graham BL et al. 2019 (ATS/ERS), Table 10: grade A/B tolerance 0.150 L above age 6.
    expect(detail.rules.find((rule) => rule.id === 'grade.over-child-age.ab-tolerance')).toMatchObject({ value: 0.15, unit: 'L', status: 'verified' });
    expect(detail.rules.some((rule) => rule.status === 'from-memory')).toBe(true);
  });

  it.each([
    ['an unknown id', '/api/protocols/no-such-set/versions/1', /"no-such-set@1".*ats-ers-2019@1/],
    ['an unknown version', '/api/protocols/ats-ers-2019/versions/9', /"ats-ers-2019@9".*ats-ers-2019-endpoint-strict@1/],
    ['an unknown id to compare', '/api/protocols/compare?from=ats-ers-2019@1&to=nope@2', /"nope@2".*ats-ers-2019@1/],
  ])('answers 404 naming %s and the known rule sets', async (_what, url, message) => {
    const response = await reader.client.fetch(`${tidemark.url}${url}`);
    const body = await json<{ error: { code: string; message: string } }>(response, 404);
    expect(body.error.code).toBe('rule-set-unknown');
    expect(body.error.message).toMatch(message);
  });

  it('compares two versions rule by rule', async () => {
    const comparison = await json<RuleSetComparison>(
      await reader.client.fetch(`${tidemark.url}/api/protocols/compare?from=ats-ers-2019@1&to=ats-ers-2019-endpoint-strict@1`),
    );
    expect(comparison.changed.map((change) => [change.ruleId, change.from.value, change.to.value])).toEqual([
      ['study.min-grade-for-endpoint', 'E', 'B'],
      ['study.min-acceptable-efforts', 1, 2],
    ]);
    expect(comparison.unchangedCount).toBe(standardRuleSet.rules.length - 2);
  });

  it('refuses a badly written rule-set name with 400', async () => {
    const response = await reader.client.fetch(`${tidemark.url}/api/protocols/compare?from=ATS 2019&to=ats-ers-2019@1`);
    expect((await json<{ error: { message: string } }>(response, 400)).error.message).toMatch(/from: write a rule set as <id>@<version>/);
  });

  it('asks for sign-in first', async () => {
    expect((await fetch(`${tidemark.url}/api/protocols`)).status).toBe(401);
  });
});

describe('a rule-set folder with files that fail validation', () => {
  let dir: string;
  let catalogue: ProtocolService;
  beforeAll(() => {
    dir = mkdtempSync(path.join(os.tmpdir(), 'tidemark-rule-sets-'));
    writeFileSync(path.join(dir, 'ats-ers-2019.v1.json'), JSON.stringify(standardRuleSet));
    const withValue = (id: string, value: unknown) => standardRuleSet.rules.map((rule) => (rule.id === id ? { ...rule, value } : rule));
    writeFileSync(path.join(dir, 'ats-ers-2019.v2.json'), JSON.stringify({ ...standardRuleSet, version: 2, rules: withValue('bev.max-volume', 'small') }));
    writeFileSync(path.join(dir, 'broken.v1.json'), '{ "id": ');
    writeFileSync(path.join(dir, 'Misnamed.json'), JSON.stringify(standardRuleSet));
    writeFileSync(path.join(dir, 'other-set.v1.json'), JSON.stringify(standardRuleSet));
    catalogue = new ProtocolService(dir);
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('lists every file, each invalid one with a reason naming the file and the rule', () => {
    const problems = Object.fromEntries(catalogue.list().map((entry) => [entry.fileName, entry.problem]));
    expect(problems).toEqual({
      'ats-ers-2019.v1.json': null,
      'ats-ers-2019.v2.json': expect.stringMatching(/^ats-ers-2019\.v2\.json: rule "bev\.max-volume": value must be a number/),
      'broken.v1.json': expect.stringMatching(/^broken\.v1\.json: not valid JSON/),
      'Misnamed.json': 'Misnamed.json: rule-set files are named <id>.v<version>.json',
      'other-set.v1.json': expect.stringMatching(/holds ats-ers-2019 version 1; the file name must be ats-ers-2019\.v1\.json/),
    });
  });

  it('refuses to show or run an invalid version (422), and names only valid sets as known (404)', () => {
    const refusal = (run: () => unknown): AppError => {
      try {
        run();
      } catch (error) {
        if (error instanceof AppError) return error;
        throw error;
      }
      throw new Error('accepted');
    };
    expect(refusal(() => catalogue.detail('ats-ers-2019', 2))).toMatchObject({ status: 422, code: 'rule-set-invalid' });
    // The latest version is the invalid v2: it is refused, not silently replaced by v1.
    expect(refusal(() => catalogue.resolve({ id: 'ats-ers-2019' }))).toMatchObject({ status: 422 });
    const unknown = refusal(() => catalogue.resolve({ id: 'nope' }));
    expect(unknown).toMatchObject({ status: 404, details: { known: ['ats-ers-2019@1'] } });
  });
});

describe('replaying the demo study under another rule set', () => {
  const standard = loadProtocol('ats-ers-2019@1');
  const strict = loadProtocol('ats-ers-2019-endpoint-strict@1');
  let result: ReplayResult;
  let before: string;

  beforeAll(async () => {
    before = sessionTables();
    result = await json<ReplayResult>(await post(admin, `${studyUrl()}/replays`, { ruleSet: 'ats-ers-2019-endpoint-strict@1' }), 201);
  });

  it('reports the counts the engine gives when run directly on the stored originals', async () => {
    expect(result.current.ref).toBe('ats-ers-2019@1');
    expect(result.target.ref).toBe('ats-ers-2019-endpoint-strict@1');
    expect(result.counts.sessionsReplayed).toBeGreaterThanOrEqual(MIN_CHECKED_SESSIONS);
    expectCountsToMatch(result, await directReplay(standard, strict));
    // The strict set only tightens endpoint eligibility: verdicts and grades cannot move.
    expect(result.counts.effortsChanged).toBe(0);
    expect(result.counts.sessionsWithGradeChange).toBe(0);
    expect(result.elapsedMs).toBeGreaterThanOrEqual(0);
  });

  it('names site and subject in the change list (for admins and data managers)', () => {
    for (const change of result.sessionChanges) {
      expect(change).toMatchObject({ siteNumber: expect.any(String), subjectCode: expect.any(String) });
      expect(change.fev1Endpoint.from !== change.fev1Endpoint.to || change.fvcEndpoint.from !== change.fvcEndpoint.to).toBe(true);
    }
  });

  it('writes nothing to sessions, uploads or efforts, and records one audit event with the counts', () => {
    expect(sessionTables()).toBe(before);
    const events = tidemark.deps.db.$client
      .prepare(`select user_id as userId, role, entity, entity_id as entityId, new_value as newValue from audit_events where action = 'replay'`)
      .all() as { userId: string; role: string; entity: string; entityId: string; newValue: string }[];
    const event = events.find((candidate) => (JSON.parse(candidate.newValue) as { replayId: string }).replayId === result.id)!;
    expect(event).toMatchObject({ userId: 'user-admin', role: 'study-admin', entity: 'study', entityId: DEMO_STUDY.id });
    expect(JSON.parse(event.newValue)).toMatchObject({ target: 'ats-ers-2019-endpoint-strict@1', counts: result.counts });
  });

  it('serves the kept replay again and its change list as a CSV download', async () => {
    const again = await json<ReplayResult>(await admin.client.fetch(`${studyUrl()}/replays/${result.id}`));
    expect(again).toEqual(result);
    const csv = await admin.client.fetch(`${studyUrl()}/replays/${result.id}.csv`);
    expect(csv.status).toBe(200);
    expect(csv.headers.get('content-type')).toMatch(/^text\/csv/);
    expect(csv.headers.get('content-disposition')).toMatch(/^attachment; filename="?replay-study-hlx-201-ats-ers-2019-endpoint-strict-1-\d{4}-\d{2}-\d{2}\.csv/);
    const lines = (await csv.text()).trimEnd().split('\r\n');
    expect(lines[0]).toMatch(/^change,session_id,site,subject/);
    const changedValues = result.sessionChanges.reduce(
      (sum, s) => sum + [s.fev1Endpoint, s.fvcEndpoint].filter((step) => step.from !== step.to).length,
      0,
    );
    expect(lines).toHaveLength(1 + changedValues);
  });

  it("under the study's own rule set, nothing changes", async () => {
    const same = await json<ReplayResult>(await post(dataManager, `${studyUrl()}/replays`, { ruleSet: 'ats-ers-2019@1' }), 201);
    expect(same.counts).toMatchObject({
      sessionsReplayed: result.counts.sessionsReplayed,
      effortsChanged: 0,
      sessionsWithGradeChange: 0,
      sessionsWithEndpointChange: 0,
      storedVerdictsDiffering: 0,
    });
    expect(same.effortChanges).toEqual([]);
    expect(same.sessionChanges).toEqual([]);
    expect(same.verdictTransitions).toEqual([]);
  });

  it('is refused to a reader (403)', async () => {
    const response = await post(reader, `${studyUrl()}/replays`, { ruleSet: 'ats-ers-2019-endpoint-strict@1' });
    expect(response.status).toBe(403);
    expect((await admin.client.fetch(`${studyUrl()}/replays/${result.id}.csv`)).status).toBe(200);
    expect((await reader.client.fetch(`${studyUrl()}/replays/${result.id}.csv`)).status).toBe(403);
  });

  it('answers 404 with the known rule sets for an unknown one', async () => {
    const response = await post(admin, `${studyUrl()}/replays`, { ruleSet: 'no-such-set@1' });
    const body = await json<{ error: { message: string; details: { known: string[] } } }>(response, 404);
    expect(body.error.message).toMatch(/no-such-set@1/);
    expect(body.error.details.known).toEqual(expect.arrayContaining(['ats-ers-2019@1', 'ats-ers-2019-endpoint-strict@1']));
  });

  it('answers 404 for a replay that is not kept', async () => {
    const response = await admin.client.fetch(`${studyUrl()}/replays/00000000-0000-0000-0000-000000000000.csv`);
    expect((await json<{ error: { message: string } }>(response, 404)).error.message).toMatch(/last 5 replays are kept/);
  });
});

describe('a replay under a rule set that moves verdicts and grades', () => {
  let dir: string;
  let replays: ReplayService;
  let tight: ResolvedProtocol;

  beforeAll(() => {
    dir = mkdtempSync(path.join(os.tmpdir(), 'tidemark-replay-sets-'));
    writeFileSync(path.join(dir, 'ats-ers-2019.v1.json'), JSON.stringify(standardRuleSet));
    // Invented tightening so that suggestions move: a smaller back-extrapolated volume and a narrower A/B tolerance.
    const tightened: Record<string, number> = {
      'bev.max-volume': 0.04,
      'bev.max-fraction-of-fvc': 0.01,
      'grade.over-child-age.ab-tolerance': 0.05,
    };
    const rules = standardRuleSet.rules.map((rule) => (rule.id in tightened ? { ...rule, value: tightened[rule.id] } : rule));
    writeFileSync(path.join(dir, 'tight-test.v1.json'), JSON.stringify({ ...standardRuleSet, id: 'tight-test', rules }));
    const catalogue = new ProtocolService(dir);
    tight = catalogue.resolve({ id: 'tight-test', version: 1 });
    replays = new ReplayService(
      new ReplayRepository(tidemark.deps.db),
      new StudyRepository(tidemark.deps.db),
      catalogue,
      tidemark.services.audit,
      tidemark.deps.storage,
      tidemark.deps.config.uploads,
      () => new Date(),
      pino({ level: 'silent' }),
    );
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('lists the efforts and sessions that change, with the same counts as the engine run directly', async () => {
    const result = await replays.replay({ userId: 'user-admin', role: 'study-admin' }, DEMO_STUDY.id, { id: 'tight-test', version: 1 });
    const direct = await directReplay(loadProtocol('ats-ers-2019@1'), tight);
    expect(direct.effortsChanged + direct.gradeChanges).toBeGreaterThan(0);
    expectCountsToMatch(result, direct);
    for (const change of result.effortChanges) {
      expect(change.fev1.from !== change.fev1.to || change.fvc.from !== change.fvc.to).toBe(true);
    }
  });
});
