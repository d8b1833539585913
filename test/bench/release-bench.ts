/**
 * Release benchmark: time and peak memory of releasing 100,000 efforts (25,000 locked sessions of
 * 4 efforts with their final reads), from the request to the e-mail: lock and read checks, the
 * signed order, every file (CSV tables, SDTM RE as CSV and SAS transport, define, workbook)
 * written and hashed, streamed to the S3 fake, and the manifest. The synthetic study is written
 * straight to the database first (not timed). Peak RSS is sampled during the release only.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { pino } from 'pino';
import type { Principal } from '../../server/auth/principal.js';
import { loadConfig } from '../../server/config.js';
import { ReleaseFixtureRepository } from '../../server/releases/release-fixture-repository.js';
import { syntheticLockedStudy } from '../../server/releases/release-fixtures.js';
import { createReleaseService } from '../../server/releases/release-routes.js';
import { startTidemark } from '../../server/runtime.js';
import { DEMO_USERS } from '../../server/seed/demo-study.js';

const EFFORTS = 100_000;
const GOAL_SECONDS = 20;
const GOAL_PEAK_MIB = 300;

/** Rows for the benchmark table: figure, value, goal, ratio to baseline. */
export async function releaseBenchmarkRows(format: (value: number, digits?: number) => string): Promise<string[][]> {
  process.env['AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED'] ??= 'true';
  setFlagsFromString('--expose-gc');
  const collectGarbage = runInNewContext('gc') as () => void;
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-release-bench-'));
  const config = loadConfig({
    PORT: '0',
    TIDEMARK_DATA_DIR: dataDir,
    TIDEMARK_FAKE_S3_PORT: '0',
    TIDEMARK_FAKE_IDP_PORT: '0',
    TIDEMARK_FAKE_SMTP_PORT: '0',
    TIDEMARK_SEED_DEMO_SESSIONS: 'false',
    TIDEMARK_WEB_DIR: path.join(dataDir, 'no-web-client'),
    LOG_LEVEL: 'silent',
  });
  const running = await startTidemark(config, { logger: pino({ level: 'silent' }) });
  try {
    const dataManager = DEMO_USERS.find((user) => user.id === 'user-data-manager')!;
    const reader = DEMO_USERS.find((user) => user.id === 'user-reader-1')!;
    const studyId = 'study-release-bench';
    const fixtures = new ReleaseFixtureRepository(running.deps.db);
    for (const rows of syntheticLockedStudy({
      studyId,
      studyCode: 'BENCH-01',
      efforts: EFFORTS,
      effortsPerSession: 4,
      sites: 25,
      subjectsPerSite: 50,
      registeredBy: 'user-coordinator-101',
      reader: { id: reader.id, name: reader.name },
      lockedBy: dataManager.id,
      sessionsPerBatch: 1000,
    })) {
      fixtures.insert(rows);
    }
    const releases = createReleaseService(running.deps, { audit: running.services.audit, messages: running.services.messages, clock: () => new Date() });
    const principal: Principal = {
      user: { id: dataManager.id, email: dataManager.email, name: dataManager.name },
      assignments: [{ studyId, studyCode: 'BENCH-01', role: 'data-manager', siteIds: null }],
      via: 'session',
      session: { idHash: 'bench', csrfToken: 'bench', authTime: new Date().toISOString() },
    };

    collectGarbage();
    collectGarbage();
    const baselineRss = process.memoryUsage().rss;
    let peakRss = baselineRss;
    const sampler = setInterval(() => {
      peakRss = Math.max(peakRss, process.memoryUsage().rss);
    }, 20);
    const started = performance.now();
    const { release } = releases.request(principal, { userId: dataManager.id, role: 'data-manager' }, studyId, {});
    await releases.settled(release.releaseId);
    const elapsedS = (performance.now() - started) / 1000;
    clearInterval(sampler);
    peakRss = Math.max(peakRss, process.memoryUsage().rss);
    const progress = releases.progress(studyId, release.releaseId);
    if (progress.status !== 'complete') throw new Error(`the benchmark release ended ${progress.status}: ${progress.error}`);
    const detail = await releases.detail(studyId, release.releaseId);
    const mib = (bytes: number) => bytes / 1024 / 1024;
    const sizes = detail.manifest!.files.map((file) => `${file.name} ${format(mib(file.sizeBytes), 1)}`).join(', ');
    const counts = detail.manifest!.counts;
    return [
      [
        `release of ${format(counts.efforts)} efforts (${format(counts.sessions)} locked sessions, ${format(counts.reRecords)} SDTM RE records): request to manifest`,
        `${format(elapsedS, 1)} s`,
        `< ${GOAL_SECONDS} s`,
        `${format(elapsedS / GOAL_SECONDS, 2)} of goal; files (MiB): ${sizes}`,
      ],
      [
        '  peak RSS during that release',
        `${format(mib(peakRss))} MiB`,
        `< ${GOAL_PEAK_MIB} MB`,
        `${format(mib(peakRss) / GOAL_PEAK_MIB, 2)} of goal (baseline: RSS before the release, ${format(mib(baselineRss))} MiB)`,
      ],
    ];
  } finally {
    await running.close();
    fs.rmSync(dataDir, { recursive: true, force: true });
  }
}
