/**
 * Locked dataset releases end to end: the real app, a real SQLite file, the S3 fake, the identity
 * provider and the SMTP catcher on loopback. Sessions are registered and uploaded through the real
 * pipeline; their final reads are written by the release test-support repository (what the
 * reading room would store at signing) and the study is locked with SessionRepository.insertLock.
 */
import { createHash, randomUUID } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { parse } from 'csv-parse/sync';
import ExcelJS from 'exceljs';
import { strToU8 } from 'fflate';
import xportJs from 'xport-js';
import type { Schedule, SessionDetail } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { loadProtocol } from '../../server/protocols/protocol-catalogue.js';
import type { ReleaseDetail, ReleaseSummary } from '../../shared/contracts/releases.js';
import { ReleaseFixtureRepository } from '../../server/releases/release-fixture-repository.js';
import { finalReadRows } from '../../server/releases/release-fixtures.js';
import { releaseKey } from '../../server/releases/release-store.js';
import { SessionRepository } from '../../server/sessions/session-repository.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
type Caller = { client: CookieClient; csrfToken: string };
type ErrorBody = { error: { code: string; message: string; details?: Record<string, unknown> } };

let tidemark: Running;
let coordinator: Caller;
let dataManager: Caller;
let schedule: Schedule;
/** Added to the real time: moved forward to make a sign-in too old to sign with. */
let clockOffsetMs = 0;
const sessionIds: string[] = [];
const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-release-test-'));
const studyUrl = (rest = '') => `${tidemark.url}/api/studies/${DEMO_STUDY.id}${rest}`;

beforeAll(async () => {
  tidemark = await startTidemarkForTest({ TIDEMARK_SEED_DEMO_SESSIONS: 'false' }, { clock: () => new Date(Date.now() + clockOffsetMs) });
  coordinator = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
  dataManager = await signIn(tidemark.url, 'data.manager@tidemark.example');
  schedule = (await (await coordinator.client.fetch(studyUrl('/schedule'))).json()) as Schedule;
  for (const [index, visit] of schedule.visits.slice(0, 3).entries()) sessionIds.push(await uploadSession(index, visit.code));
}, 120_000);
afterAll(async () => {
  await tidemark?.close();
  fs.rmSync(folder, { recursive: true, force: true });
});

function send(caller: Caller, method: string, url: string, body?: unknown) {
  return caller.client.fetch(url, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': caller.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
}

/** Registers a session at site 101 and uploads a clean three-effort file for it. */
async function uploadSession(seed: number, visitCode: string): Promise<string> {
  const subjectCode = `R101-${String(700 + seed)}`;
  expect((await send(coordinator, 'POST', studyUrl('/sites/site-101/subjects'), { code: subjectCode })).status).toBe(201);
  const registered = await send(coordinator, 'POST', studyUrl('/sites/site-101/sessions'), {
    subjectCode,
    visitCode,
    timepointCode: schedule.timepoints[0].code,
    bronchodilator: seed % 2 === 0 ? 'pre' : 'post',
    testedAt: '2026-11-20T09:30:00+01:00',
    demographics: { ageYears: 58 + seed, heightCm: 171, weightKg: 79, sex: seed % 2 === 0 ? 'male' : 'female' },
    technicianCode: 'TECH-07',
    device: { manufacturer: 'Demo devices', model: 'Model 1', serialNumber: 'SN-101-A' },
  });
  expect(registered.status).toBe(201);
  const session = (await registered.json()) as SessionDetail;
  const efforts = generateSession({ efforts: 3, base: { fvcL: 3.1 + seed * 0.2, pefLPerS: 6.4 } }, 500 + seed).map((effort) =>
    recordingToSessionEffort(effort.recording),
  );
  const form = new FormData();
  form.append('file', new Blob([strToU8(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts }))]), `release-${seed}.json`);
  const uploaded = await coordinator.client.fetch(studyUrl(`/sessions/${session.id}/uploads`), {
    method: 'POST',
    headers: { 'x-csrf-token': coordinator.csrfToken },
    body: form,
  });
  expect(uploaded.status).toBe(201);
  return session.id;
}

/** Writes a signed final read of the session (the engine's verdicts, one overridden with a comment) and marks it final. */
function finalizeRead(sessionId: string, signedAt: string): void {
  const sessions = new SessionRepository(tidemark.deps.db);
  const session = sessions.findSessionById(sessionId)!;
  const efforts = sessions.effortsOf(session.currentUploadId!);
  const rows = finalReadRows({
    studyId: DEMO_STUDY.id,
    sessionId,
    uploadId: session.currentUploadId!,
    ageYears: session.ageYears,
    efforts,
    reader: { id: 'user-reader-1', name: 'Dr Ilse Vandermeer' },
    signedAt,
    protocol: loadProtocol(DEMO_STUDY.protocolRuleSetId),
    readId: randomUUID(),
    overrides: new Map([[2, { fev1Verdict: 'usable', fvcVerdict: 'not_acceptable', comment: 'Cough at 0.6 s, "early" end, see trace' }]]),
  });
  const fixtures = new ReleaseFixtureRepository(tidemark.deps.db);
  fixtures.insert(rows);
  fixtures.markFinal(sessionId, signedAt);
}

async function requestRelease(caller: Caller, body: unknown = {}) {
  return send(caller, 'POST', studyUrl('/releases'), body);
}

/** Waits for the release job to end; returns its last progress. */
async function settled(releaseId: string): Promise<{ status: string; percent: number; error: string | null }> {
  for (let attempt = 0; attempt < 600; attempt++) {
    const progress = (await (await dataManager.client.fetch(studyUrl(`/releases/${releaseId}/progress`))).json()) as {
      status: string;
      percent: number;
      error: string | null;
    };
    if (progress.status !== 'running') return progress;
    await new Promise((resolve) => setTimeout(resolve, 100));
  }
  throw new Error(`release ${releaseId} did not finish`);
}

async function download(releaseId: string, name: string): Promise<{ response: Response; bytes: Buffer }> {
  const response = await dataManager.client.fetch(studyUrl(`/releases/${releaseId}/files/${name}`));
  return { response, bytes: Buffer.from(await response.arrayBuffer()) };
}

const sha256 = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest('hex');

describe('a release of data that is not locked and read', () => {
  it('is refused with 409 not-locked, naming the unlocked sessions', async () => {
    const response = await requestRelease(dataManager);
    expect(response.status).toBe(409);
    const body = (await response.json()) as ErrorBody;
    expect(body.error.code).toBe('not-locked');
    expect(body.error.message).toMatch(/^Only locked data with final reads can be released: 3 sessions are not locked \(subject R101-700, visit/);
    expect(body.error.details).toMatchObject({ notLocked: 3, noFinalRead: 0 });
  });

  it('is refused while locked sessions have no final read, naming them', async () => {
    new SessionRepository(tidemark.deps.db).insertLock({
      id: 'release-test-study-lock',
      studyId: DEMO_STUDY.id,
      scope: 'study',
      scopeId: DEMO_STUDY.id,
      reason: 'Database lock for the interim analysis',
      lockedBy: 'user-data-manager',
      lockedAt: new Date().toISOString(),
    });
    const response = await requestRelease(dataManager);
    expect(response.status).toBe(409);
    const body = (await response.json()) as ErrorBody;
    expect(body.error.code).toBe('not-locked');
    expect(body.error.message).toContain('3 locked sessions have no final read (subject R101-700');
  });

  it('is refused for a scope without sessions, and to anyone but a data manager', async () => {
    const empty = await requestRelease(dataManager, { scope: { siteIds: ['site-301'] } });
    expect(empty.status).toBe(409);
    expect(((await empty.json()) as ErrorBody).error.code).toBe('nothing-to-release');
    expect((await requestRelease(coordinator)).status).toBe(403);
  });
});

describe('a release of locked, finally read data', () => {
  let first: ReleaseSummary;
  let detail: ReleaseDetail;
  const files = new Map<string, Buffer>();

  beforeAll(async () => {
    sessionIds.forEach((id, index) => finalizeRead(id, `2026-11-2${index + 1}T10:00:00.000Z`));
    const response = await requestRelease(dataManager, { reason: 'Interim analysis data cut' });
    expect(response.status).toBe(202);
    const accepted = (await response.json()) as { release: ReleaseSummary; progressUrl: string };
    expect(accepted.progressUrl).toBe(`/api/studies/${DEMO_STUDY.id}/releases/${accepted.release.releaseId}/progress`);
    expect(await settled(accepted.release.releaseId)).toMatchObject({ status: 'complete', percent: 100, error: null });
    first = accepted.release;
    detail = (await (await dataManager.client.fetch(studyUrl(`/releases/${first.releaseId}`))).json()) as ReleaseDetail;
    for (const file of detail.manifest!.files) files.set(file.name, (await download(first.releaseId, file.name)).bytes);
  }, 120_000);

  it('stores every file with its SHA-256 in a manifest signed "released" by the data manager, and verifies it', () => {
    expect(detail.release).toMatchObject({ status: 'complete', requestedBy: 'Priya Halloran', reason: 'Interim analysis data cut', sessionCount: 3 });
    // 21 CFR 11.50: the listed release carries its signature's printed name, meaning and UTC time, the manifest's own.
    expect(detail.release.signature).toEqual(detail.manifest!.signature);
    expect(detail.release.signature).toMatchObject({ printedName: 'Priya Halloran', meaning: 'released' });
    expect(detail.manifest!.files.map((file) => file.name)).toEqual([
      'define.html',
      'define.json',
      'efforts.csv',
      're.csv',
      're.xpt',
      'reads.csv',
      'release.xlsx',
      'sessions.csv',
    ]);
    expect(detail.manifest!.signature).toMatchObject({ printedName: 'Priya Halloran', meaning: 'released' });
    expect(detail.manifest!.counts).toMatchObject({ sessions: 3, efforts: 9, reRecords: 9 * 9 + 3 * 5 });
    expect(detail.verification).toMatchObject({ ok: true, manifest: 'intact', signature: 'valid', problems: [] });
    for (const file of detail.manifest!.files) expect(sha256(files.get(file.name)!)).toBe(file.sha256);
  });

  it('serves each download with the SHA-256 of the manifest in a header', async () => {
    const { response, bytes } = await download(first.releaseId, 're.xpt');
    expect(response.status).toBe(200);
    expect(response.headers.get('x-content-sha256')).toBe(sha256(bytes));
    expect(response.headers.get('content-disposition')).toContain('re.xpt');
  });

  it('writes RFC 4180 CSV: CRLF lines, quoted fields with doubled quotes', () => {
    const efforts = files.get('efforts.csv')!.toString('utf8');
    expect(efforts.split('\r\n')[0]).toMatch(/^study_code,site_number,subject_code,visit_code,timepoint_code,bronchodilator,effort_number,/);
    expect(efforts).toContain('"Cough at 0.6 s, ""early"" end, see trace"');
    expect(efforts.endsWith('\r\n')).toBe(true);
    const rows = parse(efforts, { columns: true }) as Record<string, string>[];
    expect(rows).toHaveLength(9);
    expect(rows.filter((row) => row['reader_overrode'] === 'Y').length).toBeGreaterThanOrEqual(3);
  });

  it('writes SDTM RE with a record per test per effort and derived reported records', () => {
    const records = parse(files.get('re.csv')!, { columns: true }) as Record<string, string>[];
    const first3 = records.filter((record) => record['USUBJID'] === 'HLX-201-R101-700');
    expect(first3.map((record) => record['RESEQ'])).toEqual(first3.map((_record, index) => String(index + 1)));
    expect(new Set(first3.filter((record) => record['REGRPID'].endsWith('-E1')).map((record) => record['RETESTCD']))).toEqual(
      new Set(['FEV1', 'FVC', 'FEV1FVC', 'PEF', 'FEF2575', 'FET', 'BEV', 'FEV1ACPT', 'FVCACPT']),
    );
    const derived = first3.filter((record) => record['REDRVFL'] === 'Y');
    expect(derived.map((record) => record['RETESTCD'])).toEqual(['FEV1', 'FVC', 'FEV1FVC', 'FEV1GRD', 'FVCGRD']);
    expect(first3.find((record) => record['REGRPID'].endsWith('-E3') && record['RETESTCD'] === 'FVCACPT')!['REORRES']).toBe('NOT ACCEPTABLE');
    for (const record of first3) {
      expect(record).toMatchObject({ DOMAIN: 'RE', REEVAL: 'INDEPENDENT ASSESSOR', REDTC: '2026-11-20T09:30:00+01:00' });
      expect(record['RETPT']).toMatch(/ (PRE|POST)-BRONCHODILATOR$/);
    }
    const fev1 = first3.find((record) => record['RETESTCD'] === 'FEV1' && record['REDRVFL'] === 'Y')!;
    expect(fev1['REORRES']).toMatch(/^\d\.\d{3}$/);
    expect(fev1).toMatchObject({ REORRESU: 'L', RESTRESU: 'L', RESTRESC: fev1['REORRES'], RESTRESN: fev1['REORRES'] });
  });

  it('writes the SAS transport file so that xport-js reads back every RE value of the CSV', async () => {
    const file = path.join(folder, 're.xpt');
    fs.writeFileSync(file, files.get('re.xpt')!);
    const library = new xportJs.default(file);
    const metadata = (await library.getMetadata()) as { name: string; type: string; length: number; label: string }[];
    const csv = parse(files.get('re.csv')!, { columns: false }) as string[][];
    expect(metadata.map((variable) => variable.name)).toEqual(csv[0]);
    const define = JSON.parse(files.get('define.json')!.toString('utf8')) as {
      datasets: { variables: { name: string; type: string; length: number; label: string }[] }[];
    };
    expect(metadata.map(({ name, type, length, label }) => ({ name, type, length, label }))).toEqual(
      define.datasets[0].variables.map(({ name, type, length, label }) => ({ name, type, length, label })),
    );
    const read: unknown[][] = [];
    for await (const row of library.read({ rowFormat: 'array', skipHeader: true })) read.push(row as unknown[]);
    const expected = csv.slice(1).map((row) => row.map((cell, index) => (metadata[index].type === 'Num' ? (cell === '' ? null : Number(cell)) : cell)));
    expect(read).toEqual(expected);
  });

  it('writes the workbook: Readme with release, signer and caution, then a sheet per table', async () => {
    const workbook = new ExcelJS.Workbook();
    await workbook.xlsx.load(files.get('release.xlsx')! as unknown as ArrayBuffer);
    expect(workbook.worksheets.map((sheet) => sheet.name)).toEqual(['Readme', 'Sessions', 'Efforts', 'Final reads', 'RE']);
    const readme = workbook.getWorksheet('Readme')!;
    const text = readme.getSheetValues().flat().join(' ');
    expect(text).toContain(first.releaseId);
    expect(text).toContain('Priya Halloran');
    expect(text).toContain('do not replace, review by qualified staff');
    expect(workbook.getWorksheet('Efforts')!.rowCount).toBe(1 + 9);
    expect(workbook.getWorksheet('RE')!.rowCount).toBe(1 + 3 * 5);
  });

  it('e-mails the data manager when the release is ready, with the files and their SHA-256', async () => {
    await tidemark.services.messages.settle();
    const mail = tidemark.fakes.mail!.messages.map((raw) => raw.replace(/=\r?\n/g, '')).find((text) => text.includes(first.releaseId));
    expect(mail).toMatch(/To: data\.manager@tidemark\.example/);
    expect(mail).toContain('Release ready: HLX-201, 3 sessions');
    expect(mail).toContain(`/data-office/releases/${DEMO_STUDY.id}/${first.releaseId}`);
  });

  it('records the request (with its signature) and the completion (with the manifest SHA-256) in the audit trail', () => {
    const rows = tidemark.deps.db.$client
      .prepare(`select action, user_id as userId, role, new_value as newValue from audit_events where entity = 'release' and entity_id = ? order by sequence`)
      .all(first.releaseId) as { action: string; userId: string; role: string; newValue: string }[];
    expect(rows.map((row) => row.action)).toEqual(['request', 'complete']);
    expect(rows.every((row) => row.userId === 'user-data-manager' && row.role === 'data-manager')).toBe(true);
    expect(JSON.parse(rows[1].newValue).manifestSha256).toBe(first.manifestSha256 ?? detail.release.manifestSha256);
    expect(tidemark.services.audit.verify()).toMatchObject({ ok: true });
  });

  it('gives byte-identical CSV, transport and define files when the same locked data is released again', async () => {
    const response = await requestRelease(dataManager);
    expect(response.status).toBe(202);
    const { release } = (await response.json()) as { release: ReleaseSummary };
    expect((await settled(release.releaseId)).status).toBe('complete');
    const again = (await (await dataManager.client.fetch(studyUrl(`/releases/${release.releaseId}`))).json()) as ReleaseDetail;
    const hashes = (d: ReleaseDetail) => Object.fromEntries(d.manifest!.files.filter((f) => f.name !== 'release.xlsx').map((f) => [f.name, f.sha256]));
    expect(hashes(again)).toEqual(hashes(detail));
    expect(again.manifest!.order.releaseId).not.toBe(detail.manifest!.order.releaseId);
    const list = (await (await dataManager.client.fetch(studyUrl('/releases'))).json()) as ReleaseSummary[];
    expect(list.map((item) => item.releaseId)).toEqual([release.releaseId, first.releaseId]);
  });

  it('lets a monitor list and read releases, and keeps readers out', async () => {
    const monitor = await signIn(tidemark.url, 'monitor@tidemark.example');
    expect((await monitor.client.fetch(studyUrl('/releases'))).status).toBe(200);
    const reader = await signIn(tidemark.url, 'reader.one@tidemark.example');
    expect((await reader.client.fetch(studyUrl('/releases'))).status).toBe(403);
  });

  it('detects a file changed in storage: verification names it and its download is refused', async () => {
    const key = releaseKey(DEMO_STUDY.id, first.releaseId, 'reads.csv');
    const original = await tidemark.deps.storage.get(key);
    await tidemark.deps.storage.put(key, Buffer.concat([original, Buffer.from('x')]), 'text/csv');
    const checked = (await (await dataManager.client.fetch(studyUrl(`/releases/${first.releaseId}`))).json()) as ReleaseDetail;
    expect(checked.verification).toMatchObject({ ok: false, manifest: 'intact', signature: 'valid' });
    expect(checked.verification!.files.find((file) => file.name === 'reads.csv')!.status).toBe('tampered');
    expect(checked.verification!.problems).toEqual([expect.stringMatching(/^File reads\.csv was changed after the release: SHA-256 [0-9a-f]{64}/)]);
    const refused = await download(first.releaseId, 'reads.csv');
    expect(refused.response.status).toBe(409);
    expect((JSON.parse(refused.bytes.toString('utf8')) as ErrorBody).error).toMatchObject({
      code: 'release-tampered',
      message: expect.stringContaining('reads.csv'),
    });
    await tidemark.deps.storage.put(key, original, 'text/csv');
  });

  it('detects a forged manifest: one whose file hash was rewritten to match a changed file, and one whose signed order was changed', async () => {
    const manifestKey = releaseKey(DEMO_STUDY.id, first.releaseId, 'manifest.json');
    const fileKey = releaseKey(DEMO_STUDY.id, first.releaseId, 'sessions.csv');
    const manifestText = (await tidemark.deps.storage.get(manifestKey)).toString('utf8');
    const original = await tidemark.deps.storage.get(fileKey);
    const changed = Buffer.concat([original, Buffer.from('HLX-201,101,R101-999,SCR,T0,pre\r\n')]);
    await tidemark.deps.storage.put(fileKey, changed, 'text/csv');
    const manifest = JSON.parse(manifestText) as { files: { name: string; sha256: string; sizeBytes: number }[]; order: { dataCutAt: string } };
    const entry = manifest.files.find((file) => file.name === 'sessions.csv')!;
    entry.sha256 = sha256(changed);
    entry.sizeBytes = changed.length;
    await tidemark.deps.storage.put(manifestKey, Buffer.from(`${JSON.stringify(manifest)}\n`), 'application/json');
    let checked = (await (await dataManager.client.fetch(studyUrl(`/releases/${first.releaseId}`))).json()) as ReleaseDetail;
    expect(checked.verification).toMatchObject({ ok: false, manifest: 'forged' });
    expect(checked.verification!.problems[0]).toMatch(/^The manifest was changed after the release: its SHA-256 is [0-9a-f]{64}, the audit trail recorded/);
    const refused = await download(first.releaseId, 'sessions.csv');
    expect(refused.response.status).toBe(409);
    expect((JSON.parse(refused.bytes.toString('utf8')) as ErrorBody).error.message).toMatch(/manifest .* was changed after the release/);

    manifest.order.dataCutAt = '2020-01-01T00:00:00.000Z';
    await tidemark.deps.storage.put(manifestKey, Buffer.from(`${JSON.stringify(manifest)}\n`), 'application/json');
    checked = (await (await dataManager.client.fetch(studyUrl(`/releases/${first.releaseId}`))).json()) as ReleaseDetail;
    expect(checked.verification).toMatchObject({ ok: false, manifest: 'forged', signature: 'invalid' });
    expect(checked.verification!.problems).toContain(
      'The release order in the manifest (scope, data cut, data fingerprint) is not what was signed: the signature no longer matches.',
    );
    await tidemark.deps.storage.put(manifestKey, Buffer.from(manifestText), 'application/json');
    await tidemark.deps.storage.put(fileKey, original, 'text/csv');
    checked = (await (await dataManager.client.fetch(studyUrl(`/releases/${first.releaseId}`))).json()) as ReleaseDetail;
    expect(checked.verification!.ok).toBe(true);
  });

  it('asks for a fresh sign-in to sign a release: 401 reauthentication-required after 5 minutes', async () => {
    clockOffsetMs = 6 * 60_000;
    try {
      const response = await requestRelease(dataManager);
      expect(response.status).toBe(401);
      expect(((await response.json()) as ErrorBody).error.code).toBe('reauthentication-required');
    } finally {
      clockOffsetMs = 0;
    }
  });
});
