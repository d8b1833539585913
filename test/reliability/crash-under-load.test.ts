/**
 * Crash consistency under load: the server runs as a child process on a data folder of its own
 * and is killed with SIGKILL at a seeded random moment of a burst of concurrent uploads (each a
 * new subject, a new session and its file) and reads (session list, session detail, curves).
 * After each kill it is started again on the same folder, and once its start-up sweep has run:
 * every upload acknowledged with a 2xx before the kill is there with its SHA-256 and its efforts,
 * no row or stored object is left half-written, and the audit chain verifies.
 *
 * The S3 fake runs in this process, not in the child: object storage is a separate service that
 * outlives the app, so a PUT is either whole or cut off on the wire, never killed halfway through
 * writing its file. The child runs the identity provider and mail catcher itself; it is reached
 * with an API token, so no sign-in depends on them.
 *
 * Rounds: TIDEMARK_CRASH_ROUNDS (3 by default; `npm run test:long` runs 20). Seed:
 * TIDEMARK_CRASH_SEED; each round prints its kill moment so that a failure can be replayed.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { createInterface } from 'node:readline';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { verifyAuditChain } from '../../server/audit/audit-chain.js';
import { AuditRepository } from '../../server/audit/audit-repository.js';
import { AuthRepository } from '../../server/auth/auth-repository.js';
import { AuthService } from '../../server/auth/auth-service.js';
import { loadConfig } from '../../server/config.js';
import { openDatabase, openDatabaseReadOnly, type TidemarkDatabase } from '../../server/db/database.js';
import { seedDemoStudy } from '../../server/seed/demo-seed.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { ObjectStorage } from '../../server/storage/object-storage.js';
import { UPLOAD_KEY_PREFIX } from '../../server/uploads/upload-service.js';
import { UserRepository } from '../../server/users/user-repository.js';
import type { Schedule, SessionDetail, SessionPage } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { SeededRandom } from '../../shared/spirometry/synthetic/seeded-random.js';
import { startStorageFake, type StorageFake } from '../../storage-fake/s3-fake.js';
import { throwAwayInstanceEnv } from '../support/tidemark-under-test.js';

const ROUNDS = positiveInteger('TIDEMARK_CRASH_ROUNDS', 3);
const SEED = positiveInteger('TIDEMARK_CRASH_SEED', 20_261_102);
const UPLOAD_WORKERS = 8;
const READ_WORKERS = 4;
/**
 * The kill falls after a random number of acknowledged uploads (1 to this), then a random extra
 * delay: counted in uploads rather than in ms, so that a slow or busy machine still kills mid-flow.
 */
const MAX_ACKNOWLEDGED_BEFORE_KILL = 12;
const MAX_EXTRA_DELAY_MS = 400;
/** Kill anyway after this long without the wanted acknowledgements. */
const MAX_BURST_MS = 20_000;
const EFFORTS_PER_FILE = 3;
/** How long the restarted server may take to send the receipts a kill left unsent. */
const RECEIPT_WAIT_MS = 10_000;
/** Per round: the child's start (tsx compiles the server), the burst, the restart and the checks. */
const ROUND_TIMEOUT_MS = 90_000;

function positiveInteger(name: string, fallback: number): number {
  const text = process.env[name];
  if (text === undefined || text === '') return fallback;
  const value = Number(text);
  if (!Number.isInteger(value) || value < 1) throw new Error(`${name} must be a positive whole number; it is "${text}".`);
  return value;
}

/** An upload the server answered with a 2xx: from then on it must survive any crash. */
interface AcknowledgedUpload {
  readonly round: number;
  readonly sessionId: string;
  readonly sha256: string;
  readonly efforts: number;
}

/** What one burst saw before the kill. */
interface BurstTally {
  acknowledged: AcknowledgedUpload[];
  reads: number;
  /** Answers that were neither the expected success nor a cut connection: each is a finding. */
  unexpected: string[];
}

const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-crash-load-'));
let storageFake: StorageFake;
let storage: ObjectStorage;
let childEnv: NodeJS.ProcessEnv;
let child: ChildProcess | undefined;
/** The child of the last restart, checked and then loaded again by the next round. */
let runningUrl: string | undefined;
let token: string;
let schedule: Schedule;
const acknowledged: AcknowledgedUpload[] = [];
/** Kill moments come from their own stream, so that the reads' picks (which depend on timing) never shift them. */
const killMoments = new SeededRandom(SEED);
const readPicks = new SeededRandom(SEED + 1);

beforeAll(async () => {
  storageFake = await startStorageFake({ port: 0, directory: path.join(dataDir, 'storage'), bucket: 'tidemark-uploads' });
  childEnv = {
    ...process.env,
    ...throwAwayInstanceEnv(dataDir),
    TIDEMARK_S3_ENDPOINT: storageFake.endpoint,
    TIDEMARK_S3_BUCKET: 'tidemark-uploads',
    TIDEMARK_SEED_DEMO_SESSIONS: 'false',
    // The burst sends far more files a minute than one coordinator would; the limit is not under test here.
    TIDEMARK_UPLOAD_RATE_PER_MINUTE: '1000000',
    AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED: 'true',
  };
  const config = loadConfig(childEnv);
  storage = new ObjectStorage(config.storage);
  // The token is written straight into the database the child will open, as `npm run token` does.
  const db = openDatabase(config.databaseFile);
  try {
    seedDemoStudy(db);
    const auth = new AuthService(new AuthRepository(db), new UserRepository(db), config.session, () => new Date());
    token = auth.issueToken('coordinator.101@tidemark.example', 'crash-under-load test').token;
  } finally {
    db.$client.close();
  }
}, 30_000);

afterAll(async () => {
  if (child && child.exitCode === null && child.signalCode === null) {
    child.kill('SIGKILL');
    await exited(child);
  }
  storage?.destroy();
  await storageFake?.close();
  fs.rmSync(dataDir, { recursive: true, force: true });
});

/** Starts the server on the data folder; it prints its URL once its start-up sweep has run. */
async function startChild(): Promise<string> {
  child = spawn(process.execPath, ['--import', 'tsx', 'test/support/crash-server.ts'], { env: childEnv, stdio: ['ignore', 'pipe', 'pipe'] });
  // Kept to explain a failed start; a healthy child's warnings (runtime notices) are noise here.
  let errors = '';
  child.stderr!.on('data', (chunk: Buffer) => (errors = (errors + chunk.toString('utf8')).slice(-4000)));
  const lines = createInterface({ input: child.stdout! });
  for await (const line of lines) return (JSON.parse(line) as { url: string }).url;
  throw new Error(`The Tidemark child process exited before printing its URL:\n${errors}`);
}

function exited(process: ChildProcess): Promise<void> {
  return new Promise((resolve) => (process.exitCode !== null || process.signalCode !== null ? resolve() : process.once('exit', () => resolve())));
}

const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, ms));

/** Three clean efforts; each file differs by a microsecond shift of its start so that none is a duplicate. */
const baseEfforts = generateSession({ efforts: EFFORTS_PER_FILE, base: { fvcL: 3.4, pefLPerS: 7 } }, 8080).map((effort) =>
  recordingToSessionEffort(effort.recording),
);
function sessionFile(serial: number): Buffer {
  const efforts = baseEfforts.map((effort) => ({ ...effort, startTimeS: serial * 1e-6 }));
  return Buffer.from(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts }));
}

/**
 * Runs upload and read loops against `url` until `stopped()`; a request that fails at the
 * connection (the process was killed) ends its loop. Every other answer is checked.
 */
async function burst(url: string, round: number, tally: BurstTally, stopped: () => boolean): Promise<void> {
  const api = `${url}/api/studies/${DEMO_STUDY.id}`;
  const authorization = `Bearer ${token}`;
  const call = (method: string, pathName: string, body?: unknown) =>
    fetch(`${api}${pathName}`, {
      method,
      headers: { authorization, 'content-type': 'application/json' },
      body: body === undefined ? undefined : JSON.stringify(body),
    });
  const expectStatus = async (response: Response, status: number, what: string): Promise<boolean> => {
    if (response.status === status) return true;
    tally.unexpected.push(`${what}: ${response.status} ${(await response.text().catch(() => '')).slice(0, 200)}`);
    return false;
  };
  const uploadLoop = async (worker: number) => {
    for (let n = 0; !stopped(); n++) {
      const subjectCode = `CL-${round}-${worker}-${n}`;
      if (!(await expectStatus(await call('POST', '/sites/site-101/subjects', { code: subjectCode }), 201, `enrol ${subjectCode}`))) return;
      const registered = await call('POST', '/sites/site-101/sessions', {
        subjectCode,
        visitCode: schedule.visits[0].code,
        timepointCode: schedule.timepoints[0].code,
        bronchodilator: 'pre',
        testedAt: '2026-11-02T08:15:00+01:00',
        demographics: { ageYears: 58, heightCm: 168, sex: 'female' },
        technicianCode: 'TECH-CL',
      });
      if (!(await expectStatus(registered, 201, `register a session for ${subjectCode}`))) return;
      const session = (await registered.json()) as SessionDetail;
      const bytes = sessionFile(round * 1_000_000 + worker * 10_000 + n);
      const form = new FormData();
      form.append('file', new Blob([bytes], { type: 'application/json' }), `${subjectCode}.json`);
      const uploaded = await fetch(`${api}/sessions/${session.id}/uploads`, { method: 'POST', headers: { authorization }, body: form });
      // The status line is the acknowledgement: the server answers only after its commit.
      if (!(await expectStatus(uploaded, 201, `upload for ${subjectCode}`))) return;
      tally.acknowledged.push({ round, sessionId: session.id, sha256: createHash('sha256').update(bytes).digest('hex'), efforts: EFFORTS_PER_FILE });
      await uploaded.arrayBuffer().catch(() => undefined);
    }
  };
  const readLoop = async () => {
    while (!stopped()) {
      const list = await call('GET', '/sessions?pageSize=50');
      if (!(await expectStatus(list, 200, 'list sessions'))) return;
      const page = (await list.json()) as SessionPage;
      tally.reads++;
      const pick = page.items[Math.floor(readPicks.next() * page.items.length)];
      if (!pick) continue;
      if (!(await expectStatus(await call('GET', `/sessions/${pick.id}`), 200, `session ${pick.id}`))) return;
      tally.reads++;
      if (pick.status === 'checked') {
        if (!(await expectStatus(await call('GET', `/sessions/${pick.id}/curves`), 200, `curves of ${pick.id}`))) return;
        tally.reads++;
      }
    }
  };
  // A loop ends at the first cut connection; the kill is the only expected cause.
  const guarded = (loop: Promise<void>) => loop.catch(() => undefined);
  await Promise.all([
    ...Array.from({ length: UPLOAD_WORKERS }, (_, worker) => guarded(uploadLoop(worker))),
    ...Array.from({ length: READ_WORKERS }, () => guarded(readLoop())),
  ]);
}

async function storedUploadKeys(): Promise<Set<string>> {
  const keys = new Set<string>();
  for await (const key of storage.keys(UPLOAD_KEY_PREFIX)) keys.add(key);
  return keys;
}

/**
 * Every half-written trace a crash could leave, in words: rows without their parent or object,
 * objects without a row, sessions whose status disagrees with their files, writes without their
 * audit event. Empty when the data is whole.
 */
function inconsistencies(db: TidemarkDatabase, storedKeys: ReadonlySet<string>): string[] {
  const problems: string[] = [];
  const all = (sql: string) => db.$client.prepare(sql).all() as Record<string, unknown>[];
  const report = (what: string, rows: Record<string, unknown>[]) => {
    for (const row of rows) problems.push(`${what}: ${JSON.stringify(row)}`);
  };
  report('effort without its upload', all('select e.id from efforts e left join uploads u on u.id = e.upload_id where u.id is null'));
  report(
    'effort of another session than its upload',
    all('select e.id from efforts e join uploads u on u.id = e.upload_id where u.session_id <> e.session_id'),
  );
  report(
    'checked upload without efforts',
    all(`select u.id from uploads u where u.outcome = 'checked' and not exists (select 1 from efforts e where e.upload_id = u.id)`),
  );
  report(
    'upload without an audit event of its receipt',
    all(
      `select u.id from uploads u where not exists
         (select 1 from audit_events a where a.entity = 'upload' and a.entity_id = u.id and a.action in ('receive', 'receive-recovered'))`,
    ),
  );
  report(
    'checked session whose current file is missing or not checked',
    all(
      `select s.id, s.current_upload_id from test_sessions s left join uploads u on u.id = s.current_upload_id
        where s.status = 'checked' and (u.id is null or u.outcome <> 'checked' or u.session_id <> s.id)`,
    ),
  );
  report(
    'session awaiting its file although a file is recorded',
    all(`select s.id from test_sessions s where s.status = 'awaiting-file' and exists (select 1 from uploads u where u.session_id = s.id)`),
  );
  report(
    'rejected session without a rejected file',
    all(
      `select s.id from test_sessions s where s.status = 'rejected'
         and not exists (select 1 from uploads u where u.session_id = s.id and u.outcome = 'rejected')`,
    ),
  );
  const objectKeys = db.$client.prepare('select id, object_key as objectKey from uploads').all() as { id: string; objectKey: string }[];
  const referenced = new Set(objectKeys.map((row) => row.objectKey));
  for (const row of objectKeys) if (!storedKeys.has(row.objectKey)) problems.push(`upload without its stored object: ${JSON.stringify(row)}`);
  for (const key of storedKeys) if (!referenced.has(key)) problems.push(`stored object without an upload row: ${key}`);
  return problems;
}

/** Problems with the acknowledged uploads: each must be the session's checked file, with its SHA-256 and its efforts. */
function missingAcknowledged(db: TidemarkDatabase, uploads: readonly AcknowledgedUpload[]): string[] {
  const find = db.$client.prepare(
    `select u.id, u.outcome, u.object_key as objectKey, s.status, s.current_upload_id as currentUploadId,
            (select count(*) from efforts e where e.upload_id = u.id) as efforts
       from uploads u join test_sessions s on s.id = u.session_id
      where u.session_id = ? and u.sha256 = ?`,
  );
  const problems: string[] = [];
  for (const ack of uploads) {
    const row = find.get(ack.sessionId, ack.sha256) as
      | { id: string; outcome: string; status: string; currentUploadId: string; efforts: number }
      | undefined;
    if (!row) problems.push(`round ${ack.round}: acknowledged upload ${ack.sha256.slice(0, 12)} of session ${ack.sessionId} is gone`);
    else if (row.outcome !== 'checked' || row.status !== 'checked' || row.currentUploadId !== row.id || row.efforts !== ack.efforts) {
      problems.push(`round ${ack.round}: acknowledged upload of session ${ack.sessionId} is not whole: ${JSON.stringify(row)}`);
    }
  }
  return problems;
}

/** Reads the acknowledged originals back through the restarted app and hashes them. */
async function originalsThroughApi(url: string, uploads: readonly AcknowledgedUpload[]): Promise<string[]> {
  const problems: string[] = [];
  const headers = { authorization: `Bearer ${token}` };
  for (const ack of uploads) {
    const api = `${url}/api/studies/${DEMO_STUDY.id}/sessions/${ack.sessionId}`;
    const detail = (await (await fetch(api, { headers })).json()) as SessionDetail;
    const upload = detail.uploads.find((candidate) => candidate.sha256 === ack.sha256);
    if (!upload || detail.efforts.length !== ack.efforts) {
      problems.push(`session ${ack.sessionId}: ${upload ? `${detail.efforts.length} efforts` : 'no such upload'} in its detail`);
      continue;
    }
    const original = await fetch(`${api}/uploads/${upload.id}/original`, { headers });
    const sha256 = createHash('sha256').update(Buffer.from(await original.arrayBuffer())).digest('hex');
    if (original.status !== 200 || sha256 !== ack.sha256) problems.push(`session ${ack.sessionId}: original answered ${original.status}, SHA-256 ${sha256}`);
  }
  return problems;
}

describe(`SIGKILL during concurrent uploads and reads (${ROUNDS} rounds, seed ${SEED})`, () => {
  for (let round = 1; round <= ROUNDS; round++) {
    it(
      `round ${round}: after the kill and the restart's sweep, nothing acknowledged is lost and nothing is half-written`,
      async () => {
        const url = runningUrl ?? (await startChild());
        schedule ??= (await (await fetch(`${url}/api/studies/${DEMO_STUDY.id}/schedule`, { headers: { authorization: `Bearer ${token}` } })).json()) as Schedule;
        const acknowledgementsBeforeKill = 1 + Math.floor(killMoments.next() * MAX_ACKNOWLEDGED_BEFORE_KILL);
        const extraDelayMs = Math.round(killMoments.uniform(0, MAX_EXTRA_DELAY_MS));
        const tally: BurstTally = { acknowledged: [], reads: 0, unexpected: [] };
        let killed = false;
        let loopsEnded = false;
        const running = burst(url, round, tally, () => killed).finally(() => (loopsEnded = true));
        const started = performance.now();
        while (tally.acknowledged.length < acknowledgementsBeforeKill && !loopsEnded && performance.now() - started < MAX_BURST_MS) await sleep(5);
        await sleep(extraDelayMs);
        const killedAtMs = Math.round(performance.now() - started);
        killed = true;
        child!.kill('SIGKILL');
        await exited(child!);
        await running;
        expect(child!.signalCode).toBe('SIGKILL');
        process.stdout.write(
          `crash round ${round}: killed ${killedAtMs} ms into the burst (${extraDelayMs} ms after acknowledgement ${acknowledgementsBeforeKill}); ` +
            `${tally.acknowledged.length} uploads acknowledged, ${tally.reads} reads answered\n`,
        );
        expect(tally.unexpected).toEqual([]);
        acknowledged.push(...tally.acknowledged);

        runningUrl = await startChild();
        const db = openDatabaseReadOnly(loadConfig(childEnv).databaseFile);
        try {
          const count = (sql: string) => db.$client.prepare(sql).pluck().get() as number;
          process.stdout.write(
            `  after the restart: ${count(`select count(*) from audit_events where action = 'receive-recovered'`)} uploads recovered by the sweeps so far, ` +
              `${count(`select count(*) from audit_events where action = 'discard-interrupted'`)} discarded, ` +
              `${count(`select count(*) from user_messages where delivery = 'pending'`)} receipts still pending\n`,
          );
          expect(missingAcknowledged(db, acknowledged)).toEqual([]);
          expect(inconsistencies(db, await storedUploadKeys())).toEqual([]);
          expect(verifyAuditChain(new AuditRepository(db).chain())).toMatchObject({ ok: true, firstBreak: null });
        } finally {
          db.$client.close();
        }
        expect(await originalsThroughApi(runningUrl, tally.acknowledged)).toEqual([]);
      },
      ROUND_TIMEOUT_MS,
    );
  }

  /**
   * Known gap, found by this suite: a receipt e-mail is written in the upload's transaction and
   * sent after the commit; a kill in between leaves its row 'pending' and nothing sends it at the
   * next start. The fix (send pending receipts at start, after the sweep) is outside this suite's
   * files; drop `.failing` with it.
   */
  it('receipts written before a kill are sent by the restarted server', async () => {
    const db = openDatabaseReadOnly(loadConfig(childEnv).databaseFile);
    try {
      const pending = db.$client.prepare(`select count(*) from user_messages where delivery = 'pending'`).pluck();
      for (let waitedMs = 0; (pending.get() as number) > 0 && waitedMs < RECEIPT_WAIT_MS; waitedMs += 250) await sleep(250);
      expect(pending.get()).toBe(0);
    } finally {
      db.$client.close();
    }
  });

  it('`npm run audit:verify` reports the trail intact after every round', () => {
    const result = spawnSync(
      process.execPath,
      ['--import', 'tsx', 'server/cli/audit-verify.ts', '--database', loadConfig(childEnv).databaseFile, '--json'],
      { env: childEnv, encoding: 'utf8' },
    );
    expect(result.status).toBe(0);
    const verified = JSON.parse(result.stdout) as { ok: boolean; rowsChecked: number };
    expect(verified.ok).toBe(true);
    // Each acknowledged upload wrote at least its receipt and its session's check.
    expect(verified.rowsChecked).toBeGreaterThanOrEqual(2 * acknowledged.length);
  }, 30_000);
});
