/**
 * Backup and restore end to end: the real app with its demo data, the backup command run as
 * the README shows it while coordinators keep uploading, a restore into a fresh folder, and a
 * second app started on the restored folder.
 */
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { strToU8 } from 'fflate';
import type { BackupManifest } from '../../server/backup/backup-manifest.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import type { Schedule, SessionDetail, SessionPage } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { signIn, startTidemarkForTest, type CookieClient } from '../support/tidemark-under-test.js';

type Running = Awaited<ReturnType<typeof startTidemarkForTest>>;
let tidemark: Running;
let coordinator: { client: CookieClient; csrfToken: string };
let schedule: Schedule;
const workDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-backup-test-'));
const backupDir = path.join(workDir, 'backup');
const restoredDir = path.join(workDir, 'restored');
const studyUrl = (base: string) => `${base}/api/studies/${DEMO_STUDY.id}`;

beforeAll(async () => {
  tidemark = await startTidemarkForTest({}, { keepData: true });
  coordinator = await signIn(tidemark.url, 'coordinator.101@tidemark.example');
  schedule = (await (await coordinator.client.fetch(`${studyUrl(tidemark.url)}/schedule`)).json()) as Schedule;
}, 120_000);
let appStopped = false;
afterAll(async () => {
  if (!appStopped) await tidemark?.close();
  if (tidemark) fs.rmSync(tidemark.dataDir, { recursive: true, force: true });
  fs.rmSync(workDir, { recursive: true, force: true });
});

/** Runs an npm script as the README shows it, without blocking this process (the app under test lives here). */
function runScript(script: string, args: string[], env: Record<string, string>): Promise<{ status: number | null; stdout: string; stderr: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn('npm', ['run', '--silent', script, '--', ...args], {
      env: { ...process.env, LOG_LEVEL: 'silent', TIDEMARK_FAKE_S3_PORT: '0', ...env },
    });
    let stdout = '';
    let stderr = '';
    child.stdout.on('data', (chunk: Buffer) => (stdout += chunk.toString()));
    child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
    child.on('error', reject);
    child.on('close', (status) => resolve({ status, stdout, stderr }));
  });
}

function send(method: string, url: string, body: unknown) {
  return coordinator.client.fetch(url, {
    method,
    headers: { 'content-type': 'application/json', 'x-csrf-token': coordinator.csrfToken },
    body: JSON.stringify(body),
  });
}

let subjectCounter = 0;
/** Enrols a new subject at site 101, registers its screening session and uploads a clean session file. */
async function registerAndUpload(): Promise<number> {
  const n = ++subjectCounter;
  const code = `B101-${String(n).padStart(3, '0')}`;
  expect((await send('POST', `${studyUrl(tidemark.url)}/sites/site-101/subjects`, { code })).status).toBe(201);
  const registered = await send('POST', `${studyUrl(tidemark.url)}/sites/site-101/sessions`, {
    subjectCode: code,
    visitCode: schedule.visits[0].code,
    timepointCode: schedule.timepoints[0].code,
    bronchodilator: 'pre',
    testedAt: '2026-11-20T09:30:00+01:00',
    demographics: { ageYears: 55, heightCm: 170, weightKg: 75, sex: 'female' },
    technicianCode: 'TECH-BK',
  });
  expect(registered.status).toBe(201);
  const session = (await registered.json()) as SessionDetail;
  const efforts = generateSession({ efforts: 3, base: { fvcL: 3.1, pefLPerS: 6.2 } }, 7000 + n).map((effort) =>
    recordingToSessionEffort(effort.recording),
  );
  const form = new FormData();
  form.append('file', new Blob([strToU8(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts }))]), `backup-${n}.json`);
  const uploaded = await coordinator.client.fetch(`${studyUrl(tidemark.url)}/sessions/${session.id}/uploads`, {
    method: 'POST',
    headers: { 'x-csrf-token': coordinator.csrfToken },
    body: form,
  });
  expect(uploaded.status).toBe(201);
  return n;
}

function uploadRowCount(): number {
  return tidemark.deps.db.$client.prepare('select count(*) from uploads').pluck().get() as number;
}

describe('npm run --silent backup while uploads keep arriving, then restore', () => {
  let manifest: BackupManifest;
  let uploadsAtStart: number;
  let uploadsAtEnd: number;
  let backupOutput: { status: number | null; stdout: string; stderr: string };

  beforeAll(async () => {
    uploadsAtStart = uploadRowCount();
    let backupRunning = true;
    // Three coordinators' worth of uploads in flight for as long as the backup runs.
    const uploaders = Array.from({ length: 3 }, async () => {
      while (backupRunning) await registerAndUpload();
    });
    backupOutput = await runScript('backup', ['--out', backupDir], {
      TIDEMARK_DATA_DIR: tidemark.dataDir,
      TIDEMARK_S3_ENDPOINT: tidemark.fakes.storage!.endpoint,
    });
    backupRunning = false;
    await Promise.all(uploaders);
    uploadsAtEnd = uploadRowCount();
    manifest = JSON.parse(fs.readFileSync(path.join(backupDir, 'manifest.json'), 'utf8')) as BackupManifest;
  }, 120_000);

  it('succeeds and reports the database and the objects it copied', () => {
    expect(backupOutput).toMatchObject({ status: 0, stderr: '' });
    expect(backupOutput.stdout).toMatch(/Backup written to .*\n {2}database .*audit rows.*\n {2}objects {3}\d+ /);
    // Uploads were committed while the backup ran: the snapshot was taken beside live writes.
    expect(uploadsAtEnd).toBeGreaterThan(uploadsAtStart);
  });

  it('holds the database as of one moment between the first and last upload, and every object its rows name', () => {
    const uploadsInBackup = manifest.database.rowCounts['uploads'];
    expect(uploadsInBackup).toBeGreaterThanOrEqual(uploadsAtStart);
    expect(uploadsInBackup).toBeLessThanOrEqual(uploadsAtEnd);
    const uploadObjects = manifest.objects.filter((object) => object.referencedBy === 'uploads.object_key');
    expect(uploadObjects).toHaveLength(uploadsInBackup);
    for (const object of manifest.objects) {
      const bytes = fs.readFileSync(path.join(backupDir, 'objects', ...object.key.split('/')));
      expect({ key: object.key, sha256: createHash('sha256').update(bytes).digest('hex') }).toEqual({ key: object.key, sha256: object.sha256 });
    }
  });

  it('restores into a fresh folder and verifies chain, checksums and orphans', async () => {
    const restore = await runScript('restore', ['--from', backupDir, '--data-dir', restoredDir], {});
    expect(restore.stderr).toBe('');
    expect(restore.status).toBe(0);
    for (const check of ['backup files match manifest', 'database integrity', 'audit chain', 'row counts', 'referenced objects', 'no orphan objects']) {
      expect(restore.stdout).toMatch(new RegExp(`${check} +ok `));
    }
    expect(restore.stdout).toContain(`${manifest.database.auditRows} rows verified`);
    expect(restore.stdout).toMatch(/Verification passed/);
  });

  describe('a second app on the restored folder', () => {
    let restored: Running;
    beforeAll(async () => {
      restored = await startTidemarkForTest({}, { dataDir: restoredDir, keepData: true });
    }, 120_000);
    afterAll(async () => {
      await restored?.close();
    });

    it('has the sessions and uploads of the backup moment, each upload with its object', async () => {
      const count = (table: string) => restored.deps.db.$client.prepare(`select count(*) from ${table}`).pluck().get() as number;
      expect(count('test_sessions')).toBe(manifest.database.rowCounts['test_sessions']);
      expect(count('uploads')).toBe(manifest.database.rowCounts['uploads']);
      // The start-up sweep found nothing to apply: no stored object lacks its row, no row its object.
      expect(count('audit_events')).toBe(manifest.database.auditRows);
      const keys: string[] = [];
      for await (const key of restored.deps.storage.keys('uploads/')) keys.push(key);
      const rows = restored.deps.db.$client.prepare('select object_key from uploads order by object_key').pluck().all() as string[];
      expect(keys.sort()).toEqual(rows);
      const checkedWithoutFile = restored.deps.db.$client
        .prepare(`select count(*) from test_sessions s where s.status = 'checked' and not exists (select 1 from uploads u where u.session_id = s.id)`)
        .pluck()
        .get();
      expect(checkedWithoutFile).toBe(0);
    });

    it('verifies its audit chain and serves the same session list and originals through the API', async () => {
      expect(restored.services.audit.verify()).toMatchObject({ ok: true, rowsChecked: manifest.database.auditRows, lastHash: manifest.database.lastAuditHash });
      const manager = await signIn(restored.url, 'data.manager@tidemark.example');
      const page = (await (await manager.client.fetch(`${studyUrl(restored.url)}/sessions?pageSize=1`)).json()) as SessionPage;
      expect(page.total).toBe(manifest.database.rowCounts['test_sessions']);
      const upload = restored.deps.db.$client
        .prepare(`select id, session_id as sessionId, sha256 from uploads where original_name like 'backup-%' order by received_at limit 1`)
        .get() as { id: string; sessionId: string; sha256: string } | undefined;
      expect(upload).toBeDefined();
      const reader = await signIn(restored.url, 'coordinator.101@tidemark.example');
      const original = await reader.client.fetch(`${studyUrl(restored.url)}/sessions/${upload!.sessionId}/uploads/${upload!.id}/original`);
      expect(original.status).toBe(200);
      expect(createHash('sha256').update(Buffer.from(await original.arrayBuffer())).digest('hex')).toBe(upload!.sha256);
    });
  });

  it('names the object when one byte of a backed-up object was changed, and a stray object, and exits 1', async () => {
    const tamperedDir = path.join(workDir, 'tampered');
    fs.cpSync(backupDir, tamperedDir, { recursive: true });
    const victim = manifest.objects.find((object) => object.referencedBy === 'uploads.object_key' && object.sizeBytes > 100)!;
    const file = path.join(tamperedDir, 'objects', ...victim.key.split('/'));
    const bytes = fs.readFileSync(file);
    bytes[100] ^= 0x01;
    fs.writeFileSync(file, bytes);
    // And an object that no row names, listed in the manifest as if it belonged.
    const stray = Buffer.from('time_s,volume_l\n0.00,0.000\n');
    fs.writeFileSync(path.join(tamperedDir, 'objects', 'uploads', 'stray'), stray);
    const tamperedManifest = { ...manifest, objects: [...manifest.objects, { ...victim, key: 'uploads/stray', sha256: createHash('sha256').update(stray).digest('hex'), sizeBytes: stray.length }] };
    fs.writeFileSync(path.join(tamperedDir, 'manifest.json'), JSON.stringify(tamperedManifest));

    const restore = await runScript('restore', ['--from', tamperedDir, '--data-dir', path.join(workDir, 'restored-tampered')], {});
    expect(restore.status).toBe(1);
    expect(restore.stdout).toMatch(new RegExp(`backup files match manifest +FAILED +object ${victim.key}: the backup's copy does not match`));
    expect(restore.stdout).toMatch(new RegExp(`referenced objects +FAILED +object ${victim.key} does not match the SHA-256 recorded in uploads\\.sha256`));
    expect(restore.stdout).toMatch(/no orphan objects +FAILED +object uploads\/stray is stored but no row names it/);
    expect(restore.stdout).toMatch(/audit chain +ok /);
    expect(restore.stdout).toMatch(/Verification FAILED: 3 of 6 checks/);
  });

  it('refuses to restore into a folder that holds data or from one that is not a backup, and to back up into a used folder', async () => {
    const [intoExisting, notABackup, overBackup] = await Promise.all([
      runScript('restore', ['--from', backupDir, '--data-dir', tidemark.dataDir], {}),
      runScript('restore', ['--from', workDir, '--data-dir', path.join(workDir, 'never')], {}),
      runScript('backup', ['--out', backupDir], { TIDEMARK_DATA_DIR: tidemark.dataDir, TIDEMARK_S3_ENDPOINT: tidemark.fakes.storage!.endpoint }),
    ]);
    expect(intoExisting.status).toBe(1);
    expect(intoExisting.stderr).toMatch(/is not empty: restore into a new folder/);
    expect(notABackup.status).toBe(1);
    expect(notABackup.stderr).toMatch(/manifest\.json does not exist: .* is not a Tidemark backup folder/);
    expect(fs.existsSync(path.join(workDir, 'never'))).toBe(false);
    expect(overBackup.status).toBe(1);
    expect(overBackup.stderr).toMatch(/is not empty: give a new folder for the backup/);
  });
});

describe('npm run --silent backup with the app stopped', () => {
  it('starts the storage fake over DATA_DIR/storage itself and copies the same objects', async () => {
    const expectedKeys = tidemark.deps.db.$client.prepare('select object_key from uploads order by object_key').pluck().all() as string[];
    await tidemark.close();
    appStopped = true;
    const out = path.join(workDir, 'backup-of-stopped-app');
    const result = await runScript('backup', ['--out', out], { TIDEMARK_DATA_DIR: tidemark.dataDir });
    expect(result.stderr).toBe('');
    expect(result.status).toBe(0);
    expect(result.stdout).toMatch(/storage fake started for this command/);
    const stoppedManifest = JSON.parse(fs.readFileSync(path.join(out, 'manifest.json'), 'utf8')) as BackupManifest;
    expect(stoppedManifest.objects.filter((o) => o.referencedBy === 'uploads.object_key').map((o) => o.key)).toEqual(expectedKeys);
  }, 120_000);
});
