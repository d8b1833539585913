/**
 * Reading-queue benchmark: latency of `GET /api/studies/:studyId/reading/queue` for reader
 * user-reader-1 through HTTP on the real app, first with the demo's sessions (the baseline), then
 * with 100,000 more checked sessions awaiting a read in the same database.
 *
 * The extra sessions are written straight to SQLite in one transaction (not timed): subjects,
 * sessions and their current checked upload, the rows the queue query joins. They carry no effort
 * rows, so the queue's per-session effort count finds none; the count is an index look-up either way.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pino } from 'pino';
import { AuthRepository } from '../../server/auth/auth-repository.js';
import { AuthService } from '../../server/auth/auth-service.js';
import { loadConfig } from '../../server/config.js';
import { openDatabase } from '../../server/db/database.js';
import { ReadQueueRepository } from '../../server/reading/read-queue-repository.js';
import { startTidemark } from '../../server/runtime.js';
import { DEMO_STUDY, DEMO_USERS } from '../../server/seed/demo-study.js';
import { seedDemoStudy } from '../../server/seed/demo-seed.js';
import { UserRepository } from '../../server/users/user-repository.js';
import { throwAwayInstanceEnv } from '../support/tidemark-under-test.js';

const EXTRA_SESSIONS = 100_000;
const GOAL_P95_MS = 20;
const REQUESTS = 200;
/**
 * Stop sampling after this long, once at least {@link MIN_REQUESTS} requests are timed, so that a
 * regression (filtering in memory took seconds a request at this size) still ends. The count is reported.
 */
const MAX_SAMPLING_MS = 60_000;
const MIN_REQUESTS = 3;
const READER_EMAIL = 'reader.one@tidemark.example';

/** Queue latencies in ms, sorted, and the number of items the queue listed. */
interface QueueTimings {
  readonly sortedMs: number[];
  readonly items: number;
  readonly bytes: number;
}

function percentile(sorted: readonly number[], p: number): number {
  return sorted[Math.min(sorted.length - 1, Math.floor((p / 100) * sorted.length))];
}

function configFor(dataDir: string, seedDemoSessions: boolean) {
  return loadConfig({ ...throwAwayInstanceEnv(dataDir), TIDEMARK_SEED_DEMO_SESSIONS: String(seedDemoSessions) });
}

/** Starts the app on `dataDir` and times the reader's queue through HTTP, after a few warm-up calls. */
async function timeQueue(dataDir: string, seedDemoSessions: boolean): Promise<QueueTimings> {
  const config = configFor(dataDir, seedDemoSessions);
  const running = await startTidemark(config, { logger: pino({ level: 'silent' }) });
  try {
    const auth = new AuthService(new AuthRepository(running.deps.db), new UserRepository(running.deps.db), config.session, () => new Date());
    const { token } = auth.issueToken(READER_EMAIL, 'bench');
    const url = `${running.url}/api/studies/${DEMO_STUDY.id}/reading/queue`;
    const fetchQueue = async () => {
      const response = await fetch(url, { headers: { authorization: `Bearer ${token}` } });
      const text = await response.text();
      if (!response.ok) throw new Error(`GET reading/queue answered ${response.status}: ${text.slice(0, 200)}`);
      return text;
    };
    let last = await fetchQueue(); // warm-up
    const latencies: number[] = [];
    const started = performance.now();
    while (latencies.length < REQUESTS && (latencies.length < MIN_REQUESTS || performance.now() - started < MAX_SAMPLING_MS)) {
      const before = performance.now();
      last = await fetchQueue();
      latencies.push(performance.now() - before);
    }
    const page = JSON.parse(last) as { total: number };
    return { sortedMs: latencies.sort((a, b) => a - b), items: page.total, bytes: Buffer.byteLength(last) };
  } finally {
    await running.close();
  }
}

/** Adds `count` checked sessions awaiting a read to the demo study, in one transaction. */
function insertCheckedSessions(databaseFile: string, count: number): void {
  const db = openDatabase(databaseFile);
  try {
    seedDemoStudy(db);
    const coordinator = DEMO_USERS.find((user) => user.id === 'user-coordinator-101')!;
    const visitIds = (db.$client.prepare('select id from visits where study_id = ? order by id').pluck().all(DEMO_STUDY.id) as string[]);
    const timepointIds = (db.$client.prepare('select id from timepoints where study_id = ? order by id').pluck().all(DEMO_STUDY.id) as string[]);
    const siteIds = (db.$client.prepare('select id from sites where study_id = ? order by id').pluck().all(DEMO_STUDY.id) as string[]);
    const slots = visitIds.flatMap((visitId) => timepointIds.flatMap((timepointId) => (['pre', 'post'] as const).map((bronchodilator) => ({ visitId, timepointId, bronchodilator }))));
    const insertSubject = db.$client.prepare('insert into subjects (id, study_id, site_id, code, created_at) values (?, ?, ?, ?, ?)');
    const insertSession = db.$client.prepare(
      `insert into test_sessions (id, study_id, site_id, subject_id, visit_id, timepoint_id, bronchodilator, tested_at, time_zone, age_years,
         height_cm, sex, technician_code, status, fev1_grade, fvc_grade, current_upload_id, registered_by, registered_at, updated_at)
       values (?, ?, ?, ?, ?, ?, ?, ?, 'UTC', 60, 170, 'male', 'BENCH', 'checked', 'A', 'A', ?, ?, ?, ?)`,
    );
    const insertUpload = db.$client.prepare(
      `insert into uploads (id, study_id, session_id, object_key, sha256, size_bytes, original_name, content_type, detected_format,
         uploaded_by, received_at, outcome, processed_at)
       values (?, ?, ?, ?, ?, 1000, 'session.json', 'application/json', 'tidemark-json', ?, ?, 'checked', ?)`,
    );
    const start = Date.parse('2026-01-01T00:00:00.000Z');
    db.$client.transaction(() => {
      for (let n = 0; n < count; n++) {
        const at = new Date(start + n * 60_000).toISOString();
        const subjectIndex = Math.floor(n / slots.length);
        const siteId = siteIds[subjectIndex % siteIds.length];
        const subjectId = `bench-subject-${subjectIndex}`;
        if (n % slots.length === 0) insertSubject.run(subjectId, DEMO_STUDY.id, siteId, `B-${String(subjectIndex).padStart(6, '0')}`, at);
        const slot = slots[n % slots.length];
        const sessionId = `bench-session-${n}`;
        const uploadId = `bench-upload-${n}`;
        insertSession.run(sessionId, DEMO_STUDY.id, siteId, subjectId, slot.visitId, slot.timepointId, slot.bronchodilator, at, uploadId, coordinator.id, at, at);
        insertUpload.run(uploadId, DEMO_STUDY.id, sessionId, `bench/${uploadId}`, `bench-sha-${n}`, coordinator.id, at, at);
      }
    })();
    db.$client.pragma('wal_checkpoint(TRUNCATE)');
  } finally {
    db.$client.close();
  }
}

/**
 * The queue's database query alone (the page of the oldest 200 and the total, as the route asks
 * for them), on the same file, without HTTP, sign-in or JSON: sorted ms of {@link REQUESTS} calls.
 */
function timeQueueQuery(databaseFile: string): number[] {
  const db = openDatabase(databaseFile);
  try {
    const queue = new ReadQueueRepository(db);
    const readerId = DEMO_USERS.find((user) => user.email === READER_EMAIL)!.id;
    queue.openSessions(DEMO_STUDY.id, readerId, 200); // warm-up
    const latencies: number[] = [];
    for (let n = 0; n < REQUESTS; n++) {
      const before = performance.now();
      queue.openSessions(DEMO_STUDY.id, readerId, 200);
      latencies.push(performance.now() - before);
    }
    return latencies.sort((a, b) => a - b);
  } finally {
    db.$client.close();
  }
}

/** Rows for the benchmark table: figure, value, goal, ratio to baseline. */
export async function queueBenchmarkRows(format: (value: number, digits?: number) => string): Promise<string[][]> {
  process.env['AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED'] ??= 'true';
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-queue-bench-'));
  try {
    const baseline = await timeQueue(dataDir, true);
    insertCheckedSessions(configFor(dataDir, false).databaseFile, EXTRA_SESSIONS);
    const large = await timeQueue(dataDir, false);
    const query = timeQueueQuery(configFor(dataDir, false).databaseFile);
    const describe = (timings: QueueTimings) =>
      `p50 ${format(percentile(timings.sortedMs, 50), 1)} ms, p95 ${format(percentile(timings.sortedMs, 95), 1)} ms ` +
      `(${timings.sortedMs.length} requests, ${format(timings.items)} items, ${format(timings.bytes / 1024)} KiB)`;
    const largeP95 = percentile(large.sortedMs, 95);
    return [
      [
        `reading queue through HTTP for one reader, ${format(EXTRA_SESSIONS)} checked sessions awaiting a read (plus the demo's)`,
        describe(large),
        `p95 < ${GOAL_P95_MS} ms${largeP95 < GOAL_P95_MS ? '' : ' (missed)'}`,
        `p95 ${format(largeP95 / percentile(baseline.sortedMs, 95), 1)} (baseline: the demo's sessions alone, ${describe(baseline)})`,
      ],
      [
        `  of which the queue's database query (page of 200 and the total), same ${format(EXTRA_SESSIONS)} sessions, no HTTP`,
        `p50 ${format(percentile(query, 50), 1)} ms, p95 ${format(percentile(query, 95), 1)} ms (${query.length} queries)`,
        `p95 < ${GOAL_P95_MS} ms${percentile(query, 95) < GOAL_P95_MS ? '' : ' (missed)'}`,
        `${format(percentile(query, 95) / largeP95, 2)} of the route's p95`,
      ],
    ];
  } finally {
    fs.rmSync(dataDir, { recursive: true, force: true });
  }
}
