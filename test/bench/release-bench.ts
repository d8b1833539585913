/**
 * Release benchmark: time and peak memory of releasing 100,000 efforts (25,000 locked sessions of
 * 4 efforts with their final reads), from the request to the manifest and the e-mail: lock and
 * read checks, the signed order, every file (CSV tables, SDTM RE as CSV and SAS transport, define,
 * workbook) written and hashed, streamed to the S3 fake, and the manifest.
 *
 * The synthetic study is written straight to the database first (not timed), then the release
 * runs in a fresh Node process on that data folder, so that its peak resident memory is the
 * release's and not the seeding's. That process is the app as deployed on hosted services: the
 * S3 fake, identity provider and mail catcher run in this (parent) process and the app reaches
 * them through its configuration, as it would reach the hosted ones.
 */
import { spawn } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { pino } from 'pino';
import type { Principal } from '../../server/auth/principal.js';
import { loadConfig } from '../../server/config.js';
import { ReleaseFixtureRepository } from '../../server/releases/release-fixture-repository.js';
import { syntheticLockedStudy } from '../../server/releases/release-fixtures.js';
import { createReleaseService } from '../../server/releases/release-routes.js';
import { startTidemark } from '../../server/runtime.js';
import { DEMO_PASSWORD, DEMO_USERS } from '../../server/seed/demo-study.js';
import { serverLaunch } from '../support/server-launch.js';
import { throwAwayInstanceEnv } from '../support/tidemark-under-test.js';

const EFFORTS = 100_000;
const GOAL_SECONDS = 20;
const GOAL_PEAK_MB = 300;
const STUDY_ID = 'study-release-bench';
const STUDY_CODE = 'BENCH-01';
/** Set for the child process that runs the timed release. */
const CHILD_DATA_DIR = 'TIDEMARK_RELEASE_BENCH_DATA_DIR';
/** The services the child reaches, as a hosted deployment is configured. */
const SERVICE_SETTINGS = ['TIDEMARK_S3_ENDPOINT', 'TIDEMARK_OIDC_ISSUER', 'TIDEMARK_SMTP_URL'] as const;

/** What the child reports. */
interface ReleaseMeasurement {
  readonly elapsedS: number;
  readonly cpuS: number;
  readonly baselineRss: number;
  readonly peakRss: number;
  readonly counts: { sessions: number; efforts: number; reRecords: number };
  readonly files: { name: string; sizeBytes: number }[];
}

function configFor(dataDir: string) {
  return loadConfig({
    ...throwAwayInstanceEnv(dataDir),
    TIDEMARK_SEED_DEMO_SESSIONS: 'false',
    ...Object.fromEntries(SERVICE_SETTINGS.flatMap((name) => (process.env[name] ? [[name, process.env[name]]] : []))),
  });
}

/** The three services the app uses, outside the measured process (stand-ins for the hosted ones). */
async function startServices(dataDir: string): Promise<{ env: Record<(typeof SERVICE_SETTINGS)[number], string>; close(): Promise<void> }> {
  // Imported here, not at the top: the measured process runs this module too and must not load them.
  const { startStorageFake } = await import('../../storage-fake/s3-fake.js');
  const { startFakeIdentityProvider } = await import('../../server/dev-fakes/identity-provider.js');
  const { startMailCatcher } = await import('../../server/dev-fakes/mail-catcher.js');
  const { storage: storageSettings, identity: identitySettings } = configFor(dataDir);
  const storage = await startStorageFake({ port: 0, directory: path.join(dataDir, 'storage'), bucket: storageSettings.bucket });
  const identity = await startFakeIdentityProvider({
    port: 0,
    accounts: DEMO_USERS.map((user) => ({ email: user.email, name: user.name, password: DEMO_PASSWORD })),
    // Nobody signs in during the benchmark.
    client: { clientId: identitySettings.clientId, clientSecret: identitySettings.clientSecret, redirectUris: ['http://127.0.0.1/auth/callback'] },
  });
  const mail = await startMailCatcher({ port: 0 });
  return {
    env: { TIDEMARK_S3_ENDPOINT: storage.endpoint, TIDEMARK_OIDC_ISSUER: identity.issuer, TIDEMARK_SMTP_URL: mail.smtpUrl },
    close: async () => {
      await Promise.all([storage.close(), identity.close(), mail.close()]);
    },
  };
}

/** Writes the demo study (for its users) and the synthetic locked study into a new data folder. */
async function seed(dataDir: string): Promise<void> {
  const running = await startTidemark(configFor(dataDir), { logger: pino({ level: 'silent' }) });
  try {
    const reader = DEMO_USERS.find((user) => user.id === 'user-reader-1')!;
    const fixtures = new ReleaseFixtureRepository(running.deps.db);
    for (const rows of syntheticLockedStudy({
      studyId: STUDY_ID,
      studyCode: STUDY_CODE,
      efforts: EFFORTS,
      effortsPerSession: 4,
      sites: 25,
      subjectsPerSite: 50,
      registeredBy: 'user-coordinator-101',
      reader: { id: reader.id, name: reader.name },
      lockedBy: 'user-data-manager',
      sessionsPerBatch: 1000,
    })) {
      fixtures.insert(rows);
    }
    running.deps.db.$client.pragma('wal_checkpoint(TRUNCATE)');
  } finally {
    await running.close();
  }
}

/** In the child: releases the synthetic study and measures it. */
async function measureRelease(dataDir: string): Promise<ReleaseMeasurement> {
  process.env['AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED'] ??= 'true';
  const config = configFor(dataDir);
  const running = await startTidemark(config, { logger: pino({ level: 'silent' }) });
  try {
    const dataManager = DEMO_USERS.find((user) => user.id === 'user-data-manager')!;
    const releases = createReleaseService(running.deps, {
      audit: running.services.audit,
      messages: running.services.messages,
      signatures: running.services.signatures,
      clock: () => new Date(),
    });
    const principal: Principal = {
      user: { id: dataManager.id, email: dataManager.email, name: dataManager.name },
      assignments: [{ studyId: STUDY_ID, studyCode: STUDY_CODE, role: 'data-manager', siteIds: null }],
      via: 'session',
      session: { idHash: 'bench', csrfToken: 'bench', authTime: new Date().toISOString() },
    };
    const baselineRss = process.memoryUsage.rss();
    let peakRss = baselineRss;
    const sampler = setInterval(() => {
      peakRss = Math.max(peakRss, process.memoryUsage.rss());
    }, 25);
    const cpuBefore = process.cpuUsage();
    const started = performance.now();
    const { release } = releases.request(principal, { userId: dataManager.id, role: 'data-manager' }, STUDY_ID, {});
    await releases.settled(release.releaseId);
    const elapsedS = (performance.now() - started) / 1000;
    const cpu = process.cpuUsage(cpuBefore);
    clearInterval(sampler);
    peakRss = Math.max(peakRss, process.memoryUsage.rss());
    const progress = releases.progress(STUDY_ID, release.releaseId);
    if (progress.status !== 'complete') throw new Error(`the benchmark release ended ${progress.status}: ${progress.error}`);
    const detail = await releases.detail(STUDY_ID, release.releaseId);
    return {
      elapsedS,
      cpuS: (cpu.user + cpu.system) / 1e6,
      baselineRss,
      peakRss,
      counts: detail.manifest!.counts,
      files: detail.manifest!.files.map(({ name, sizeBytes }) => ({ name, sizeBytes })),
    };
  } finally {
    await running.close();
  }
}

/** Rows for the benchmark table: figure, value, goal, ratio to baseline. */
export async function releaseBenchmarkRows(format: (value: number, digits?: number) => string): Promise<string[][]> {
  const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-release-bench-'));
  try {
    await seed(dataDir);
    const services = await startServices(dataDir);
    const launch = serverLaunch();
    const output = await new Promise<string>((resolve, reject) => {
      const child = spawn(process.execPath, [...launch.flags, '--import', 'tsx', fileURLToPath(import.meta.url)], {
        env: { ...process.env, ...launch.env, ...services.env, [CHILD_DATA_DIR]: dataDir, AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED: 'true' },
        stdio: ['ignore', 'pipe', 'inherit'],
      });
      let text = '';
      child.stdout.on('data', (chunk: Buffer) => (text += chunk.toString('utf8')));
      child.on('error', reject);
      child.on('exit', (code) => (code === 0 ? resolve(text) : reject(new Error(`the release benchmark process exited with ${code}`))));
    }).finally(() => services.close());
    const measured = JSON.parse(output.trim().split('\n').at(-1)!) as ReleaseMeasurement;
    const mb = (bytes: number) => bytes / 1e6;
    const sizes = measured.files.map((file) => `${file.name} ${format(mb(file.sizeBytes), 1)}`).join(', ');
    return [
      [
        `release of ${format(measured.counts.efforts)} efforts (${format(measured.counts.sessions)} locked sessions, ${format(measured.counts.reRecords)} SDTM RE records): request to manifest`,
        `${format(measured.elapsedS, 1)} s (CPU ${format(measured.cpuS, 1)} s on 2 threads)`,
        `< ${GOAL_SECONDS} s`,
        `${format(measured.elapsedS / GOAL_SECONDS, 2)} of goal; files (MB): ${sizes}`,
      ],
      [
        '  peak RSS of the app process during that release (with its workbook thread; storage, identity provider and mail outside it, as hosted)',
        `${format(mb(measured.peakRss))} MB`,
        `< ${GOAL_PEAK_MB} MB`,
        `${format(mb(measured.peakRss) / GOAL_PEAK_MB, 2)} of goal (baseline: RSS of the started app before the release, ${format(mb(measured.baselineRss))} MB)`,
      ],
    ];
  } finally {
    fs.rmSync(dataDir, { recursive: true, force: true });
  }
}

if (process.env[CHILD_DATA_DIR] && process.argv[1] === fileURLToPath(import.meta.url)) {
  const measured = await measureRelease(process.env[CHILD_DATA_DIR]);
  process.stdout.write(`${JSON.stringify(measured)}\n`);
}
