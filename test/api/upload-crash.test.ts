/**
 * Crash in the middle of an upload: the server process is killed (SIGKILL) after the original is
 * in storage and before the database commit. At the next start the sweep must apply the stored
 * file, leave no half-written rows, and the audit chain must verify.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { createInterface } from 'node:readline';
import { afterAll, describe, expect, it } from '@jest/globals';
import { strToU8 } from 'fflate';
import { AuthRepository } from '../../server/auth/auth-repository.js';
import { AuthService } from '../../server/auth/auth-service.js';
import { loadConfig } from '../../server/config.js';
import { openDatabase } from '../../server/db/database.js';
import { seedDemoStudy } from '../../server/seed/demo-seed.js';
import { DEMO_STUDY } from '../../server/seed/demo-study.js';
import { UserRepository } from '../../server/users/user-repository.js';
import type { Schedule, SessionDetail } from '../../shared/contracts/sessions.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort } from '../../shared/spirometry/session-document.js';
import { generateSession } from '../../shared/spirometry/synthetic/curve-generator.js';
import { startTidemarkForTest, throwAwayInstanceEnv } from '../support/tidemark-under-test.js';

const dataDir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-crash-'));
const childEnv = {
  ...process.env,
  ...throwAwayInstanceEnv(dataDir),
};
let child: ChildProcess | undefined;

afterAll(() => {
  child?.kill('SIGKILL');
  fs.rmSync(dataDir, { recursive: true, force: true });
});

/** A token for the site-101 coordinator, written straight into the database the child will open. */
function issueCoordinatorToken(): string {
  const db = openDatabase(loadConfig(childEnv).databaseFile);
  try {
    seedDemoStudy(db);
    const auth = new AuthService(new AuthRepository(db), new UserRepository(db), loadConfig(childEnv).session, () => new Date());
    return auth.issueToken('coordinator.101@tidemark.example', 'crash test').token;
  } finally {
    db.$client.close();
  }
}

async function startChild(): Promise<string> {
  child = spawn(process.execPath, ['--import', 'tsx', 'test/support/crash-server.ts'], { env: childEnv, stdio: ['ignore', 'pipe', 'inherit'] });
  const lines = createInterface({ input: child.stdout! });
  for await (const line of lines) return (JSON.parse(line) as { url: string }).url;
  throw new Error('the crash server exited before printing its URL');
}

describe('a crash between the stored object and the database commit', () => {
  it('leaves no half-written session, and the next start applies the stored file', async () => {
    const token = issueCoordinatorToken();
    const url = await startChild();
    const api = `${url}/api/studies/${DEMO_STUDY.id}`;
    const call = (method: string, pathName: string, body?: unknown) =>
      fetch(`${api}${pathName}`, {
        method,
        headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' },
        body: body === undefined ? undefined : JSON.stringify(body),
      });
    const schedule = (await (await call('GET', '/schedule')).json()) as Schedule;
    expect((await call('POST', '/sites/site-101/subjects', { code: 'CR-001' })).status).toBe(201);
    const registered = await call('POST', '/sites/site-101/sessions', {
      subjectCode: 'CR-001',
      visitCode: schedule.visits[0].code,
      timepointCode: schedule.timepoints[0].code,
      bronchodilator: 'pre',
      testedAt: '2026-11-02T08:15:00+01:00',
      demographics: { ageYears: 58, heightCm: 168, sex: 'female' },
      technicianCode: 'TECH-01',
    });
    const session = (await registered.json()) as SessionDetail;

    const efforts = generateSession({ efforts: 3, base: { fvcL: 3.0, pefLPerS: 6 } }, 77).map((e) => recordingToSessionEffort(e.recording));
    const form = new FormData();
    form.append('file', new Blob([strToU8(JSON.stringify({ format: SESSION_DOCUMENT_FORMAT, metadata: {}, efforts }))]), 'crash-after-store.json');
    // The process dies before answering: the request fails, nothing was acknowledged.
    await expect(fetch(`${api}/sessions/${session.id}/uploads`, { method: 'POST', headers: { authorization: `Bearer ${token}` }, body: form })).rejects.toThrow();
    await new Promise<void>((resolve) => (child!.exitCode !== null || child!.signalCode ? resolve() : child!.once('exit', () => resolve())));
    expect(child!.signalCode).toBe('SIGKILL');

    // Between the crash and the restart: the object is stored, no row points to it.
    const db = openDatabase(loadConfig(childEnv).databaseFile);
    expect(db.$client.prepare('select count(*) from uploads where session_id = ?').pluck().get(session.id)).toBe(0);
    expect(db.$client.prepare('select status from test_sessions where id = ?').pluck().get(session.id)).toBe('awaiting-file');
    db.$client.close();

    const restarted = await startTidemarkForTest({}, { dataDir, keepData: true });
    try {
      const uploads = restarted.deps.db.$client
        .prepare('select id, object_key as objectKey, outcome, original_name as originalName from uploads where session_id = ?')
        .all(session.id) as { id: string; objectKey: string; outcome: string; originalName: string }[];
      expect(uploads).toHaveLength(1);
      expect(uploads[0]).toMatchObject({ outcome: 'checked', originalName: 'crash-after-store.json' });
      const after = restarted.services.sessions.detailOf(session.id);
      expect(after.status).toBe('checked');
      expect(after.efforts).toHaveLength(3);
      // Every stored object is referenced by a row, and the chain holds.
      const keys: string[] = [];
      for await (const key of restarted.deps.storage.keys('uploads/')) keys.push(key);
      const referenced = new Set(
        (restarted.deps.db.$client.prepare('select object_key from uploads').pluck().all() as string[]),
      );
      expect(keys.filter((key) => !referenced.has(key))).toEqual([]);
      expect(restarted.services.audit.verify()).toMatchObject({ ok: true });
      const recovered = restarted.deps.db.$client
        .prepare(`select action from audit_events where entity_id = ?`)
        .pluck()
        .all(uploads[0].id);
      expect(recovered).toEqual(['receive-recovered']);
    } finally {
      await restarted.close();
    }
  });
});
