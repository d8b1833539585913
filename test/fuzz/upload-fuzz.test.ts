/**
 * Malformed uploads: fast-check throws mutated session files (effort CSV, zip of CSVs, session
 * JSON, FHIR R4 Bundle; see session-file-mutations.ts) and damaged multipart envelopes at the
 * upload route of the real app, as a site coordinator, through supertest. Every answer must be
 * below 500 with a clear message, the server must keep answering /api/health, and at the end the
 * database must be whole: every upload row's stored object matches its SHA-256, no stored object
 * lacks its row, no effort lacks its upload, no session is half-processed, and the audit chain
 * verifies.
 *
 * Runs per property: TIDEMARK_FUZZ_RUNS (default {@link DEFAULT_RUNS}; the long variant sets it
 * in the thousands). A failure prints fast-check's seed and path: replay with
 * TIDEMARK_FUZZ_SEED=<seed> TIDEMARK_FUZZ_PATH=<path>.
 */
import { createHash } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import fc from 'fast-check';
import { strToU8, zipSync } from 'fflate';
import request from 'supertest';
import type { Schedule } from '../../shared/contracts/sessions.js';
import { buildFhirBundle } from '../../shared/spirometry/fhir-bundle.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort, type SessionDocument } from '../../shared/spirometry/session-document.js';
import { effortToCsv, generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { UPLOAD_KEY_PREFIX } from '../../server/uploads/upload-service.js';
import { signIn, startTidemarkForTest } from '../support/tidemark-under-test.js';
import { mutatedEffortCsv, mutatedEffortZip, mutatedFhirBundle, mutatedSessionJson, type MutatedFile } from './session-file-mutations.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;

const DEFAULT_RUNS = 30;
const RUNS = Number(process.env['TIDEMARK_FUZZ_RUNS'] ?? DEFAULT_RUNS);
/** How long one upload may take before the test calls the server stuck. */
const ANSWER_WITHIN_MS = 30_000;
/** Generous time for one property: about a second a run on this 2-core machine, three allowed. */
const PROPERTY_TIMEOUT_MS = 120_000 + RUNS * 3_000;
const fuzzSettings = (): fc.Parameters<unknown> => ({
  numRuns: RUNS,
  // The server keeps state between runs, so a shrunk replay would not see the same server: report the first failure as found.
  endOnFailure: true,
  ...(process.env['TIDEMARK_FUZZ_SEED'] ? { seed: Number(process.env['TIDEMARK_FUZZ_SEED']), path: process.env['TIDEMARK_FUZZ_PATH'] } : {}),
});

let tidemark: Running;
let bearer: string;
let schedule: Schedule;
let sessionCounter = 0;
/** A session of site 101 that still takes a file (awaiting one, or after a rejection). */
let openSessionId: string | undefined;
const statusTally = new Map<string, number>();

const studyPath = `/api/studies/${DEMO_STUDY.id}`;

beforeAll(async () => {
  tidemark = await startTidemarkForTest({ TIDEMARK_SEED_DEMO_SESSIONS: 'false', TIDEMARK_UPLOAD_RATE_PER_MINUTE: '1000000' });
  const coordinator = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
  const token = await coordinator.client.fetch(`${tidemark.url}/api/me/tokens`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', 'x-csrf-token': coordinator.csrfToken },
    body: JSON.stringify({ label: 'upload fuzz' }),
  });
  expect(token.status).toBe(201);
  bearer = `Bearer ${((await token.json()) as { token: string }).token}`;
  schedule = (await request(tidemark.url).get(`${studyPath}/schedule`).set('authorization', bearer)).body as Schedule;
}, 120_000);

afterAll(async () => {
  await tidemark?.close();
  const rows = [...statusTally].sort(([a], [b]) => a.localeCompare(b)).map(([key, count]) => `| ${key} | ${count} |`);
  if (rows.length) console.log([`Upload fuzz: ${RUNS} runs per property`, '| format and status | files |', '| --- | --- |', ...rows].join('\n'));
});

/** Registers a fresh session of site 101 (a new subject each time, so no slot is taken twice). */
async function registerSession(): Promise<string> {
  const subjectCode = `FZ101-${String(++sessionCounter).padStart(5, '0')}`;
  const enrolled = await request(tidemark.url).post(`${studyPath}/sites/site-101/subjects`).set('authorization', bearer).send({ code: subjectCode });
  expect(enrolled.status).toBe(201);
  const registered = await request(tidemark.url)
    .post(`${studyPath}/sites/site-101/sessions`)
    .set('authorization', bearer)
    .send({
      subjectCode,
      visitCode: schedule.visits[0].code,
      timepointCode: schedule.timepoints[0].code,
      bronchodilator: 'pre',
      testedAt: '2026-11-20T09:30:00+01:00',
      demographics: { ageYears: 61, heightCm: 172, weightKg: 80, sex: 'male' },
      technicianCode: 'TECH-07',
    });
  expect(registered.status).toBe(201);
  return (registered.body as { id: string }).id;
}

async function sessionTakingAFile(): Promise<string> {
  openSessionId ??= await registerSession();
  return openSessionId;
}

function tally(key: string): void {
  statusTally.set(key, (statusTally.get(key) ?? 0) + 1);
}

/** What every answer must be: below 500, and for a refusal a JSON error whose message says why. */
function expectClearAnswer(what: string, status: number, body: unknown, text: string): void {
  if (status >= 500) throw new Error(`${what}: answered ${status} ${text.slice(0, 300)}`);
  if (status >= 400) {
    const message = (body as { error?: { message?: unknown } } | undefined)?.error?.message;
    if (typeof message !== 'string' || message.trim() === '') throw new Error(`${what}: ${status} without a message: ${text.slice(0, 300)}`);
  }
}

async function expectHealthy(what: string): Promise<void> {
  const health = await request(tidemark.url).get('/api/health').timeout(ANSWER_WITHIN_MS);
  if (health.status !== 200) throw new Error(`after ${what}: /api/health answered ${health.status}`);
}

async function upload(file: MutatedFile): Promise<void> {
  const sessionId = await sessionTakingAFile();
  const response = await request(tidemark.url)
    .post(`${studyPath}/sessions/${sessionId}/uploads`)
    .set('authorization', bearer)
    .attach('file', Buffer.from(file.bytes), { filename: file.name, contentType: file.contentType })
    .timeout(ANSWER_WITHIN_MS)
    .catch((error: unknown) => {
      throw new Error(`${file.description}: no answer within ${ANSWER_WITHIN_MS} ms (${(error as Error).message})`);
    });
  tally(`${file.format} ${response.status}`);
  expectClearAnswer(file.description, response.status, response.body, response.text);
  if (response.status === 201) {
    const sha256 = createHash('sha256').update(file.bytes).digest('hex');
    expect((response.body as { upload: { sha256: string } }).upload.sha256).toBe(sha256);
    openSessionId = undefined; // a checked session takes no further file
  }
  await expectHealthy(file.description);
}

describe('mutated session files at the upload route', () => {
  it.each([
    ['effort CSVs', mutatedEffortCsv],
    ['zips of effort CSVs', mutatedEffortZip],
    ['session JSON documents', mutatedSessionJson],
    ['FHIR R4 Bundles', mutatedFhirBundle],
  ] as const)('answers every one of the mutated %s below 500 with a clear message', async (_name, files) => {
    await fc.assert(fc.asyncProperty(files, upload), fuzzSettings());
  }, PROPERTY_TIMEOUT_MS);
});

describe('samples near the top of the double range (found by this suite: they made the engine loop for ever)', () => {
  const HUGE = 1.7e308;
  const document = (): SessionDocument => ({
    format: SESSION_DOCUMENT_FORMAT,
    metadata: {},
    efforts: generateSession({ efforts: 3, base: { fvcL: 3.1, pefLPerS: 6.4 } }, 4242).map((effort) => recordingToSessionEffort(effort.recording)),
  });
  const withHugeSample = (doc: SessionDocument): SessionDocument => {
    doc.efforts[0].values[100] = HUGE;
    return doc;
  };
  const csvWithHugeSample = (): string => {
    const lines = effortToCsv(generateSession({ efforts: 1, base: { fvcL: 3.1, pefLPerS: 6.4 } }, 4243)[0].recording).split('\n');
    lines[101] = `${lines[101].split(',')[0]},${HUGE}`;
    return lines.join('\n');
  };
  const bundle = (): string => {
    const built = buildFhirBundle(document()) as { entry: { resource: { valueSampledData: { data: string } } }[] };
    const tokens = built.entry[0].resource.valueSampledData.data.split(' ');
    tokens[100] = String(HUGE);
    built.entry[0].resource.valueSampledData.data = tokens.join(' ');
    return JSON.stringify(built);
  };

  it.each([
    ['an effort CSV', 'effort-1.csv', () => strToU8(csvWithHugeSample()), /row 102, column volume_l: 1\.7e\+308 L is beyond the ±100 L/],
    ['a zip of effort CSVs', 'efforts.zip', () => zipSync({ 'effort-1.csv': strToU8(csvWithHugeSample()) }), /effort-1\.csv: row 102, column volume_l/],
    ['a session JSON document', 'session.json', () => strToU8(JSON.stringify(withHugeSample(document()))), /efforts\[0\]\.values\[100\]: a sample lies within ±100/],
    ['a FHIR R4 Bundle', 'bundle.json', () => strToU8(bundle()), /efforts\[0\]\.values\[100\]: a sample lies within ±100/],
  ])('refuses %s holding one, in words, and keeps answering', async (_format, name, bytes, reason) => {
    const sessionId = await sessionTakingAFile();
    const response = await request(tidemark.url)
      .post(`${studyPath}/sessions/${sessionId}/uploads`)
      .set('authorization', bearer)
      .attach('file', Buffer.from(bytes()), { filename: name, contentType: 'application/octet-stream' })
      .timeout(ANSWER_WITHIN_MS);
    expect(response.status).toBe(422);
    expect((response.body as { error: { message: string } }).error.message).toMatch(reason);
    await expectHealthy(name);
  });
});

/** A well-formed multipart body around one small CSV, to damage byte by byte. */
function multipartBody(boundary: string): Buffer {
  return Buffer.from(
    `--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="effort-1.csv"\r\nContent-Type: text/csv\r\n\r\n` +
      'time_s,volume_l\n0.00,0.0\n0.01,0.1\n' +
      `\r\n--${boundary}--\r\n`,
    'latin1',
  );
}

describe('damaged multipart envelopes at the upload route', () => {
  it('answers a cut, flipped or mislabelled multipart request below 500 with a clear message', async () => {
    const boundary = 'tidemark-fuzz-boundary';
    const envelope = fc.record({
      cut: fc.option(fc.integer({ min: 0, max: 400 }), { freq: 2 }),
      flips: fc.array(fc.record({ at: fc.integer({ min: 0, max: 400 }), xor: fc.integer({ min: 1, max: 255 }) }), { maxLength: 3 }),
      contentType: fc.constantFrom(
        `multipart/form-data; boundary=${boundary}`,
        'multipart/form-data',
        'multipart/form-data; boundary=other',
        `multipart/mixed; boundary=${boundary}`,
        'text/plain',
      ),
      field: fc.constantFrom('file', 'files', 'upload', ''),
    });
    await fc.assert(
      fc.asyncProperty(envelope, async ({ cut, flips, contentType, field }) => {
        let body = multipartBody(boundary);
        if (field !== 'file') body = Buffer.from(body.toString('latin1').replace('name="file"', `name="${field}"`), 'latin1');
        for (const flip of flips) if (flip.at < body.length) body[flip.at] ^= flip.xor;
        if (cut !== null) body = body.subarray(0, Math.min(cut, body.length));
        const what = `multipart (${contentType}, field "${field}", cut ${cut}, flips ${JSON.stringify(flips)})`;
        const sessionId = await sessionTakingAFile();
        const response = await request(tidemark.url)
          .post(`${studyPath}/sessions/${sessionId}/uploads`)
          .set('authorization', bearer)
          .set('content-type', contentType)
          .send(body)
          .timeout(ANSWER_WITHIN_MS);
        tally(`multipart ${response.status}`);
        expectClearAnswer(what, response.status, response.body, response.text);
        if (response.status === 201) openSessionId = undefined;
        await expectHealthy(what);
      }),
      fuzzSettings(),
    );
  }, PROPERTY_TIMEOUT_MS);
});

describe('after the fuzzing', () => {
  it('keeps every stored original with its checksum, and leaves no object, effort or session half-written', async () => {
    const db = tidemark.deps.db.$client;
    const uploads = db.prepare('select id, object_key as objectKey, sha256, outcome from uploads').all() as {
      id: string;
      objectKey: string;
      sha256: string;
      outcome: string;
    }[];
    expect(uploads.length).toBeGreaterThan(0);
    const wrongChecksums: string[] = [];
    for (const row of uploads) {
      const stored = await tidemark.deps.storage.get(row.objectKey);
      if (createHash('sha256').update(stored).digest('hex') !== row.sha256) wrongChecksums.push(row.id);
    }
    expect(wrongChecksums).toEqual([]);

    const referenced = new Set(uploads.map((row) => row.objectKey));
    const unreferenced: string[] = [];
    for await (const key of tidemark.deps.storage.keys(UPLOAD_KEY_PREFIX)) if (!referenced.has(key)) unreferenced.push(key);
    expect(unreferenced).toEqual([]);

    expect(db.prepare('select count(*) as n from efforts e left join uploads u on u.id = e.upload_id where u.id is null').get()).toEqual({ n: 0 });
    // A checked file has its efforts; a rejected one has none.
    expect(
      db
        .prepare(
          `select u.id, u.outcome, count(e.id) as efforts from uploads u left join efforts e on e.upload_id = u.id
            group by u.id having (u.outcome = 'checked' and efforts = 0) or (u.outcome = 'rejected' and efforts > 0)`,
        )
        .all(),
    ).toEqual([]);
    // A checked session points at a checked file of its own; a rejected one says why; one awaiting a file has none.
    expect(
      db
        .prepare(
          `select s.id, s.status from test_sessions s left join uploads u on u.id = s.current_upload_id
            where (s.status = 'checked' and (u.id is null or u.outcome != 'checked' or u.session_id != s.id or s.check_json is null))
               or (s.status = 'rejected' and (s.rejection_reasons = '[]' or not exists (select 1 from uploads r where r.session_id = s.id and r.outcome = 'rejected')))
               or (s.status = 'awaiting-file' and exists (select 1 from uploads r where r.session_id = s.id))`,
        )
        .all(),
    ).toEqual([]);
    expect(tidemark.services.audit.verify()).toMatchObject({ ok: true });
  });
});
