/**
 * Ingest benchmark: sessions uploaded per second end to end through HTTP (multipart upload of a
 * Tidemark session JSON of 8 efforts, 15 s at 100 Hz each, to the real app with the S3 fake and
 * SQLite on this machine), at concurrency 1 and 16, with p50/p99 latency, and the engine's share
 * of the time (the pure decode + analysis of the same files, timed alone).
 *
 * Baseline: the raw storage put of the same bytes, as many files at the same concurrency, through
 * the app's own storage client to the same S3 fake: what storing the original alone costs.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { pino } from 'pino';
import { AuthRepository } from '../../server/auth/auth-repository.js';
import { AuthService } from '../../server/auth/auth-service.js';
import { loadConfig } from '../../server/config.js';
import { loadProtocol } from '../../server/protocols/protocol-catalogue.js';
import { startTidemark } from '../../server/runtime.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { checkSessionFile } from '../../server/uploads/file-check.js';
import { UserRepository } from '../../server/users/user-repository.js';
import type { Schedule, SessionDetail } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { percentile, type BenchRow, type NumberFormat } from './bench-report.js';
import { throwAwayInstanceEnv } from '../support/tidemark-under-test.js';

/** Goal for ingest throughput on a 2-core machine. */
const GOAL_SESSIONS_PER_S = 200;

/** Throughput and latency of `count` jobs run `concurrency` at a time. */
interface Throughput {
  readonly perSecond: number;
  readonly p50: number;
  readonly p99: number;
}

/** Runs `work` for items `0..count-1`, `concurrency` at a time, timing each; `work` returns when its item is done. */
async function timeConcurrently(concurrency: number, count: number, work: (index: number) => Promise<void>): Promise<Throughput> {
  const latencies: number[] = [];
  let next = 0;
  const started = performance.now();
  await Promise.all(
    Array.from({ length: concurrency }, async () => {
      while (next < count) {
        const index = next++;
        const before = performance.now();
        await work(index);
        latencies.push(performance.now() - before);
      }
    }),
  );
  const elapsedS = (performance.now() - started) / 1000;
  latencies.sort((a, b) => a - b);
  return { perSecond: latencies.length / elapsedS, p50: percentile(latencies, 50), p99: percentile(latencies, 99) };
}

/** Rows for the benchmark table. */
export async function ingestBenchmarkRows(format: NumberFormat): Promise<BenchRow[]> {
  process.env['AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED'] ??= 'true';
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-bench-'));
  const config = loadConfig({
    ...throwAwayInstanceEnv(dataDir),
    TIDEMARK_SEED_DEMO_SESSIONS: 'false',
    // One coordinator sends hundreds of files a minute here; the per-user upload limit is not what is measured.
    TIDEMARK_UPLOAD_RATE_PER_MINUTE: '1000000',
  });
  const running = await startTidemark(config, { logger: pino({ level: 'silent' }) });
  try {
    const auth = new AuthService(new AuthRepository(running.deps.db), new UserRepository(running.deps.db), config.session, () => new Date());
    const { token } = auth.issueToken('coordinator.101@tidemark.example', 'bench');
    const api = `${running.url}/api/studies/${DEMO_STUDY.id}`;
    const headers = { authorization: `Bearer ${token}` };
    const json = async <T>(method: string, pathName: string, body?: unknown): Promise<T> => {
      const response = await fetch(`${api}${pathName}`, {
        method,
        headers: { ...headers, 'content-type': 'application/json' },
        body: body === undefined ? undefined : JSON.stringify(body),
      });
      if (!response.ok) throw new Error(`${method} ${pathName}: ${response.status} ${await response.text()}`);
      return (await response.json()) as T;
    };
    const schedule = await json<Schedule>('GET', '/schedule');
    const slots = schedule.visits.flatMap((visit) =>
      schedule.timepoints.flatMap((timepoint) => (['pre', 'post'] as const).map((bronchodilator) => ({ visit, timepoint, bronchodilator }))),
    );

    // Distinct files (a duplicate would be refused): shift each effort by a tiny per-file offset.
    const baseEfforts = generateSession({ efforts: 8, base: { sampleRateHz: 100, blowDurationS: 15, leadInS: 0.5, tidalBreaths: 0 } }, 2026).map(
      (effort) => recordingToSessionEffort(effort.recording),
    );
    const fileFor = (n: number) =>
      Buffer.from(
        JSON.stringify({
          format: SESSION_DOCUMENT_FORMAT,
          metadata: {},
          efforts: baseEfforts.map((effort) => ({ ...effort, startTimeS: n * 1e-6 })),
        }),
      );

    let sessionNumber = 0;
    const prepare = async (count: number) => {
      const prepared: { sessionId: string; bytes: Buffer }[] = [];
      for (let i = 0; i < count; i++) {
        const n = sessionNumber++;
        const slot = slots[n % slots.length];
        const subjectIndex = Math.floor(n / slots.length);
        const subjectCode = `B-${String(subjectIndex).padStart(5, '0')}`;
        if (n % slots.length === 0) await json('POST', '/sites/site-101/subjects', { code: subjectCode });
        const session = await json<SessionDetail>('POST', '/sites/site-101/sessions', {
          subjectCode,
          visitCode: slot.visit.code,
          timepointCode: slot.timepoint.code,
          bronchodilator: slot.bronchodilator,
          testedAt: '2026-10-01T09:00:00+02:00',
          demographics: { ageYears: 60, heightCm: 170, sex: 'male' },
          technicianCode: 'BENCH',
        });
        prepared.push({ sessionId: session.id, bytes: fileFor(n) });
      }
      return prepared;
    };
    const uploadOne = async (item: { sessionId: string; bytes: Buffer }) => {
      const form = new FormData();
      form.append('file', new Blob([item.bytes], { type: 'application/json' }), 'session.json');
      const response = await fetch(`${api}/sessions/${item.sessionId}/uploads`, { method: 'POST', headers, body: form });
      await response.arrayBuffer();
      if (response.status !== 201) throw new Error(`upload answered ${response.status}`);
    };
    const measure = async (concurrency: number, count: number) => {
      const work = await prepare(count);
      await Promise.all(work.splice(0, Math.min(16, concurrency * 2)).map(uploadOne)); // warm-up
      return timeConcurrently(concurrency, work.length, (index) => uploadOne(work[index]));
    };
    // The same bytes and the same number of files, stored under keys of their own.
    const measureStoragePut = async (concurrency: number, count: number) => {
      const files = Array.from({ length: count }, (_, index) => fileFor(900_000 + concurrency * 1000 + index));
      const put = (index: number) => running.deps.storage.put(`bench-baseline/${concurrency}/${index}`, files[index], 'application/json');
      await Promise.all(Array.from({ length: Math.min(16, concurrency * 2) }, (_, index) => running.deps.storage.put(`bench-baseline/warm-up/${index}`, files[index], 'application/json')));
      return timeConcurrently(concurrency, count, put);
    };

    const protocol = loadProtocol(DEMO_STUDY.protocolRuleSetId);
    const sample = fileFor(999_999);
    const registered = { subjectCode: 'x', visitCode: 'x', timepointCode: 'x', bronchodilator: 'pre' as const, ageYears: 60 };
    const limits = { maxExpandedBytes: config.uploads.maxExpandedBytes, maxEntries: config.uploads.maxZipEntries, maxCompressionRatio: config.uploads.maxCompressionRatio };
    for (let i = 0; i < 20; i++) checkSessionFile('s.json', sample, registered, protocol, limits);
    const engineStarted = performance.now();
    for (let i = 0; i < 50; i++) checkSessionFile('s.json', sample, registered, protocol, limits);
    const engineMs = (performance.now() - engineStarted) / 50;

    const rows: BenchRow[] = [];
    for (const [concurrency, count] of [
      [1, 150],
      [16, 400],
    ] as const) {
      const result = await measure(concurrency, count);
      const baseline = await measureStoragePut(concurrency, count);
      rows.push({
        figure: `sessions ingested per second through HTTP, concurrency ${concurrency} (8 efforts x 15 s at 100 Hz, ${format(sample.length / 1024)} KiB JSON)`,
        // The app serves requests on one Node thread: the engine's share is its busy time over the wall time.
        value:
          `${format(result.perSecond, 1)}/s, p50 ${format(result.p50, 1)} ms, p99 ${format(result.p99, 1)} ms; engine (decode + analysis) ` +
          `${format(engineMs, 2)} ms/session = ${format((100 * engineMs * result.perSecond) / 1000)} % of the server thread's time`,
        goal: `>= ${GOAL_SESSIONS_PER_S}/s`,
        baseline: `storage put of the same bytes, same concurrency: ${format(baseline.perSecond, 1)}/s, p50 ${format(baseline.p50, 1)} ms`,
        ratio: `${format(result.perSecond / baseline.perSecond, 2)} of the put rate`,
      });
    }
    return rows;
  } finally {
    await running.close();
    fs.rmSync(dataDir, { recursive: true, force: true });
  }
}
