/**
 * The upload pipeline end to end: the real app, a real SQLite file, the S3 fake and the SMTP
 * catcher on loopback. Curves come from the engine's seeded generator (demo data); what is
 * checked is the pipeline's behaviour, not the engine's numbers (those have their own suites).
 */
import { createHash } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { strToU8, zipSync } from 'fflate';
import type { Schedule, SessionDetail, SessionPage, UploadResult } from '../../shared/contracts/sessions.js';
import { generateSession, effortToCsv } from '../../shared/spirometry/synthetic/curve-generator.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { SessionRepository } from '../../server/sessions/session-repository.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
let tidemark: Running;
let coordinator: { client: CookieClient; csrfToken: string };
let schedule: Schedule;
const studyUrl = () => `${tidemark.url}/api/studies/${DEMO_STUDY.id}`;
let subjectCounter = 0;

beforeAll(async () => {
  tidemark = await startTidemarkForTest({ TIDEMARK_UPLOAD_MAX_MB: '1' });
  coordinator = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
  schedule = (await (await coordinator.client.fetch(`${studyUrl()}/schedule`)).json()) as Schedule;
});
afterAll(async () => {
  await tidemark?.close();
});

function send(method: string, url: string, body?: unknown) {
  return coordinator.client.fetch(url, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': coordinator.csrfToken },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
}

function upload(sessionId: string, name: string, bytes: Uint8Array, contentType = 'application/octet-stream') {
  const form = new FormData();
  form.append('file', new Blob([bytes], { type: contentType }), name);
  return coordinator.client.fetch(`${studyUrl()}/sessions/${sessionId}/uploads`, {
    method: 'POST',
    headers: { 'x-csrf-token': coordinator.csrfToken },
    body: form,
  });
}

async function enrolSubject(siteId = 'site-101'): Promise<string> {
  const code = `T${siteId.slice(-3)}-${String(900 + ++subjectCounter)}`;
  const response = await send('POST', `${studyUrl()}/sites/${siteId}/subjects`, { code });
  expect(response.status).toBe(201);
  return code;
}

function registration(subjectCode: string, overrides: Record<string, unknown> = {}) {
  return {
    subjectCode,
    visitCode: schedule.visits[0].code,
    timepointCode: schedule.timepoints[0].code,
    bronchodilator: 'pre',
    testedAt: '2026-11-20T09:30:00+01:00',
    demographics: { ageYears: 61, heightCm: 172, weightKg: 80, sex: 'male' },
    technicianCode: 'TECH-07',
    device: { manufacturer: 'Demo devices', model: 'Model 1', serialNumber: 'SN-101-A' },
    ...overrides,
  };
}

async function registerSession(overrides: Record<string, unknown> = {}): Promise<SessionDetail> {
  const subjectCode = await enrolSubject();
  const response = await send('POST', `${studyUrl()}/sites/site-101/sessions`, registration(subjectCode, overrides));
  expect(response.status).toBe(201);
  return (await response.json()) as SessionDetail;
}

/** A clean three-effort session document with the given metadata; seed makes each file unique. */
function sessionJson(seed: number, metadata: Record<string, unknown> = {}): Uint8Array {
  const efforts = generateSession({ efforts: 3, base: { fvcL: 3.2, pefLPerS: 6.5 } }, seed).map((effort) =>
    recordingToSessionEffort(effort.recording),
  );
  return strToU8(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata, efforts }));
}

/** Moves one sample's time by 40 % of the sampling interval: no longer uniform. */
function jitter(csv: string): string {
  const lines = csv.split('\n');
  const interval = Number(lines[2].split(',')[0]) - Number(lines[1].split(',')[0]);
  const [time, value] = lines[51].split(',');
  lines[51] = `${(Number(time) + 0.4 * interval).toFixed(6)},${value}`;
  return lines.join('\n');
}

function csvOf(seed: number): string {
  return effortToCsv(generateSession({ efforts: 1, base: { fvcL: 3.2, pefLPerS: 6.5 } }, seed)[0].recording);
}

async function uploadRows(sessionId: string) {
  return new SessionRepository(tidemark.deps.db).uploadsOf(sessionId);
}

async function expectRejected(response: Response, sessionId: string, reasonPattern: RegExp) {
  expect(response.status).toBe(422);
  const body = (await response.json()) as { error: { code: string; message: string; details: { uploadId: string; reasons: string[] } } };
  expect(body.error.code).toBe('file-rejected');
  expect(body.error.message).toMatch(reasonPattern);
  // The file is kept, with its checksum, and the session lists the reasons.
  const rows = await uploadRows(sessionId);
  const row = rows.find((candidate) => candidate.id === body.error.details.uploadId)!;
  expect(row.outcome).toBe('rejected');
  const stored = await tidemark.deps.storage.get(row.objectKey);
  expect(createHash('sha256').update(stored).digest('hex')).toBe(row.sha256);
  const detail = (await (await coordinator.client.fetch(`${studyUrl()}/sessions/${sessionId}`)).json()) as SessionDetail;
  expect(detail.status).toBe('rejected');
  expect(detail.rejectionReasons.join(' ')).toMatch(reasonPattern);
  return body.error;
}

describe('a coordinator registers a session and uploads its file', () => {
  let session: SessionDetail;
  let result: UploadResult;
  const bytes = sessionJson(1);

  beforeAll(async () => {
    session = await registerSession();
    const response = await upload(session.id, 'session-ok.json', bytes, 'application/json');
    expect(response.status).toBe(201);
    result = (await response.json()) as UploadResult;
  });

  it('stores the original with its SHA-256, then checks it', async () => {
    expect(result.upload.sha256).toBe(createHash('sha256').update(bytes).digest('hex'));
    expect(result.upload.detectedFormat).toBe('tidemark-session-json');
    expect(result.session.status).toBe('checked');
    expect(result.session.efforts).toHaveLength(3);
    expect(result.session.check?.fev1Grade).toMatch(/^[A-FU]$/);
    const row = (await uploadRows(session.id))[0];
    const stored = await tidemark.deps.storage.get(row.objectKey);
    expect(Buffer.compare(stored, Buffer.from(bytes))).toBe(0);
  });

  it('serves the original back byte for byte and the curves of every effort', async () => {
    const original = await coordinator.client.fetch(`${studyUrl()}/sessions/${session.id}/uploads/${result.upload.id}/original`);
    expect(original.status).toBe(200);
    expect(original.headers.get('x-content-sha256')).toBe(result.upload.sha256);
    expect(Buffer.compare(Buffer.from(await original.arrayBuffer()), Buffer.from(bytes))).toBe(0);
    const curves = (await (await coordinator.client.fetch(`${studyUrl()}/sessions/${session.id}/curves`)).json()) as {
      efforts: { timeS: number[]; volumeL: number[] }[];
    };
    expect(curves.efforts).toHaveLength(3);
    expect(curves.efforts[0].timeS.length).toBe(curves.efforts[0].volumeL.length);
    expect(curves.efforts[0].timeS.length).toBeGreaterThan(100);
  });

  it('writes the audit trail in the same transactions, and the chain verifies', async () => {
    const rows = tidemark.deps.db.$client
      .prepare(`select entity, action, user_id as userId, role from audit_events where entity_id in (?, ?) order by sequence`)
      .all(session.id, result.upload.id) as { entity: string; action: string; userId: string; role: string }[];
    expect(rows.map((row) => `${row.entity}:${row.action}`)).toEqual(['session:register', 'upload:receive', 'session:check-file']);
    expect(rows.every((row) => row.userId === 'user-coordinator-101' && row.role === 'site-coordinator')).toBe(true);
    expect(tidemark.services.audit.verify()).toMatchObject({ ok: true, firstBreak: null });
  });

  it('e-mails a receipt with the status and a link, and lists it in the app', async () => {
    await tidemark.services.messages.settle();
    // Quoted-printable soft line breaks ("=" at the end of a line) are undone before reading the text.
    const mail = tidemark.fakes.mail!.messages.map((raw) => raw.replace(/=\r?\n/g, '')).find((text) => text.includes('session-ok.json'));
    expect(mail).toBeDefined();
    expect(mail).toMatch(/To: coordinator\.101@tidemark\.example/);
    expect(mail).toContain(`/site-desk/sessions/${DEMO_STUDY.id}/${session.id}`);
    const listed = (await (await coordinator.client.fetch(`${tidemark.url}/api/me/messages`)).json()) as {
      subject: string;
      delivery: string;
    }[];
    expect(listed.find((message) => message.subject.includes('session-ok.json'))).toMatchObject({ delivery: 'sent' });
  });

  it('refuses the same file again and names the session that has it', async () => {
    const other = await registerSession();
    const response = await upload(other.id, 'copy.json', bytes);
    expect(response.status).toBe(409);
    const body = (await response.json()) as { error: { code: string; message: string } };
    expect(body.error.code).toBe('duplicate-file');
    expect(body.error.message).toContain(session.subjectCode);
    expect(await uploadRows(other.id)).toHaveLength(0);
  });

  it('refuses a second file for a checked session', async () => {
    const response = await upload(session.id, 'again.json', sessionJson(2));
    expect(response.status).toBe(409);
    expect(((await response.json()) as { error: { code: string } }).error.code).toBe('session-has-file');
  });

  it('lists the site\'s sessions sorted, filtered and paged by the server', async () => {
    const page = (await (
      await coordinator.client.fetch(`${studyUrl()}/sessions?status=checked&sort=subjectCode&direction=asc&pageSize=2&page=0`)
    ).json()) as SessionPage;
    expect(page.items.length).toBeLessThanOrEqual(2);
    expect(page.total).toBeGreaterThanOrEqual(1);
    expect(page.items.every((item) => item.status === 'checked' && item.siteId === 'site-101')).toBe(true);
    const codes = page.items.map((item) => item.subjectCode);
    expect([...codes].sort()).toEqual(codes);
  });
});

describe('automation with a bearer token uses the same API', () => {
  it('uploads a zip of effort CSVs with session.json', async () => {
    const session = await registerSession();
    const { token } = (await (
      await send('POST', `${tidemark.url}/api/me/tokens`, { label: 'site uploader' })
    ).json()) as { token: string };
    const zip = zipSync({
      'e1.csv': strToU8(csvOf(11)),
      'e2.csv': strToU8(csvOf(12)),
      'e3.csv': strToU8(csvOf(13)),
      'session.json': strToU8(JSON.stringify({ subjectCode: session.subjectCode, bronchodilator: 'pre' })),
    });
    const form = new FormData();
    form.append('file', new Blob([zip]), 'session.zip');
    const response = await fetch(`${studyUrl()}/sessions/${session.id}/uploads`, {
      method: 'POST',
      headers: { authorization: `Bearer ${token}` },
      body: form,
    });
    expect(response.status).toBe(201);
    const result = (await response.json()) as UploadResult;
    expect(result.upload.detectedFormat).toBe('effort-zip');
    expect(result.session.efforts.map((effort) => effort.label)).toEqual(['e1.csv', 'e2.csv', 'e3.csv']);
  });
});

describe('bad files are stored, rejected with every reason, and can be processed again', () => {
  const flatCsv = ['time_s,volume_l', ...Array.from({ length: 400 }, (_, i) => `${(i / 100).toFixed(2)},0.000000`)].join('\n');
  const cases: [string, string, Uint8Array, RegExp][] = [
    ['wrong header', 'bad-header.csv', strToU8(csvOf(21).replace('time_s,volume_l', 'seconds,litres')), /header/i],
    ['missing header', 'no-header.csv', strToU8(csvOf(22).split('\n').slice(1).join('\n')), /header|not a format/i],
    ['text in a number', 'text.csv', strToU8(csvOf(23).replace(/\n(\d+\.\d+),[-\d.]+\n/, '\n$1,abc\n')), /row \d+.*(number|abc)|abc/i],
    ['non-uniform sampling', 'jitter.csv', strToU8(jitter(csvOf(24))), /uniform|interval|sampl/i],
    [
      'too slow sampling',
      'slow.csv',
      strToU8(effortToCsv(generateSession({ efforts: 1, base: { sampleRateHz: 50 } }, 25)[0].recording)),
      /100 Hz|sample rate/i,
    ],
    ['no forced blow', 'flat.csv', strToU8(flatCsv), /forced|blow|expiration/i],
    ['empty file', 'empty.csv', new Uint8Array(0), /empty/i],
    ['unknown format', 'picture.png', new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 1, 2, 3]), /not a format/i],
    ['truncated zip', 'cut.zip', zipSync({ 'e1.csv': strToU8(csvOf(26)) }).slice(0, 300), /zip/i],
    ['zip entry outside the archive', 'evil.zip', zipSync({ '../evil.csv': strToU8(csvOf(27)) }), /outside the archive/i],
    [
      'zip bomb',
      'bomb.zip',
      zipSync({ 'e1.csv': new Uint8Array(6 * 1024 * 1024) }, { level: 9 }),
      /expands|more than/i,
    ],
  ];

  it.each(cases)('%s', async (_name, fileName, bytes, reason) => {
    const session = await registerSession();
    const error = await expectRejected(await upload(session.id, fileName, bytes), session.id, reason);
    expect(error.message).toContain(fileName.replace(/\.zip$/, ''));
  });

  it('a file for another bronchodilator set is rejected, then checked after the session is corrected', async () => {
    const session = await registerSession();
    const error = await expectRejected(
      await upload(session.id, 'post-set.json', sessionJson(31, { bronchodilator: 'post' })),
      session.id,
      /post-bronchodilator set/,
    );
    const withoutReason = await send('PATCH', `${studyUrl()}/sessions/${session.id}`, { bronchodilator: 'post' });
    expect(withoutReason.status).toBe(400);
    const corrected = await send('PATCH', `${studyUrl()}/sessions/${session.id}`, {
      bronchodilator: 'post',
      reason: 'registered as pre by mistake; the file is the post-bronchodilator set',
    });
    expect(corrected.status).toBe(200);
    const again = await send('POST', `${studyUrl()}/sessions/${session.id}/uploads/${error.details.uploadId}/reprocess`);
    expect(again.status).toBe(200);
    const result = (await again.json()) as UploadResult;
    expect(result.session.status).toBe('checked');
    const correction = tidemark.deps.db.$client
      .prepare(`select old_value as oldValue, new_value as newValue, reason from audit_events where entity_id = ? and action = 'correct'`)
      .get(session.id) as { oldValue: string; newValue: string; reason: string };
    expect(JSON.parse(correction.oldValue)).toEqual({ bronchodilator: 'pre' });
    expect(JSON.parse(correction.newValue)).toEqual({ bronchodilator: 'post' });
    expect(correction.reason).toMatch(/by mistake/);
  });

  it('a file over the size limit is refused before anything is stored', async () => {
    const session = await registerSession();
    const before = await countObjects();
    const response = await upload(session.id, 'huge.csv', new Uint8Array(1024 * 1024 + 10).fill(0x31));
    expect(response.status).toBe(413);
    expect(((await response.json()) as { error: { message: string } }).error.message).toMatch(/larger than the 1 MB/);
    expect(await uploadRows(session.id)).toHaveLength(0);
    expect(await countObjects()).toBe(before);
  });
});

async function countObjects(): Promise<number> {
  let count = 0;
  for await (const _key of tidemark.deps.storage.keys('uploads/')) count++;
  return count;
}

describe('bad registrations are refused with the field named, and nothing is written', () => {
  it.each([
    ['an unknown subject', { subjectCode: 'NOPE-001' }, 422, /NOPE-001 is not enrolled at site 101/],
    ['a visit not in the schedule', { visitCode: 'V99' }, 422, /V99 is not in this study's schedule/],
    ['an age out of range', { demographics: { ageYears: 130, heightCm: 170, sex: 'female' } }, 400, /Age 130 years is outside/],
    ['a height out of range', { demographics: { ageYears: 60, heightCm: 17, sex: 'female' } }, 400, /Height 17 cm is outside/],
    ['a test time in the future', { testedAt: '2999-01-01T10:00:00+00:00' }, 422, /in the future/],
  ])('%s', async (_name, overrides, status, message) => {
    const subjectCode = await enrolSubject();
    const auditBefore = tidemark.services.audit.verify().rowsChecked;
    const response = await send('POST', `${studyUrl()}/sites/site-101/sessions`, { ...registration(subjectCode), ...overrides });
    expect(response.status).toBe(status);
    expect(((await response.json()) as { error: { message: string } }).error.message).toMatch(message);
    expect(tidemark.services.audit.verify().rowsChecked).toBe(auditBefore);
  });

  it('refuses a site the coordinator does not belong to', async () => {
    const response = await send('POST', `${studyUrl()}/sites/site-201/sessions`, registration('201-001'));
    expect(response.status).toBe(403);
    expect(((await response.json()) as { error: { message: string } }).error.message).toMatch(/other sites/);
  });

  it("does not let a coordinator upload to another site's session", async () => {
    const other = await signIn(tidemark.url, 'coordinator.201@tidemark.example');
    const code = `T201-${String(900 + ++subjectCounter)}`;
    const headers = { 'content-type': 'application/json', 'x-csrf-token': other.csrfToken };
    await other.client.fetch(`${studyUrl()}/sites/site-201/subjects`, { method: 'POST', headers, body: JSON.stringify({ code }) });
    const created = (await (
      await other.client.fetch(`${studyUrl()}/sites/site-201/sessions`, {
        method: 'POST',
        headers,
        body: JSON.stringify(registration(code)),
      })
    ).json()) as SessionDetail;
    const response = await upload(created.id, 'intruder.json', sessionJson(41));
    expect(response.status).toBe(404);
    expect(await uploadRows(created.id)).toHaveLength(0);
  });
});

describe('locked data', () => {
  it('refuses an upload to a locked session with the lock reason, and keeps nothing', async () => {
    const session = await registerSession();
    new SessionRepository(tidemark.deps.db).insertLock({
      id: `lock-${session.id}`,
      studyId: DEMO_STUDY.id,
      scope: 'subject',
      scopeId: tidemark.deps.db.$client.prepare('select subject_id as id from test_sessions where id = ?').pluck().get(session.id) as string,
      reason: 'subject withdrawn; data frozen for the interim analysis',
      lockedBy: 'user-data-manager',
      lockedAt: new Date().toISOString(),
    });
    const before = await countObjects();
    const response = await upload(session.id, 'late.json', sessionJson(51));
    expect(response.status).toBe(409);
    const body = (await response.json()) as { error: { code: string; message: string } };
    expect(body.error.code).toBe('locked');
    expect(body.error.message).toMatch(/subject withdrawn/);
    expect(await uploadRows(session.id)).toHaveLength(0);
    expect(await countObjects()).toBe(before);
    const correction = await send('PATCH', `${studyUrl()}/sessions/${session.id}`, { technicianCode: 'TECH-99' });
    expect(correction.status).toBe(409);
  });
});
