import { execFile } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import Sqlite from 'better-sqlite3';
import { AuditRepository } from '../../server/audit/audit-repository.js';
import { AuditTrail } from '../../server/audit/audit-trail.js';
import { openDatabase, type TidemarkDatabase } from '../../server/db/database.js';

const run = promisify(execFile);
let dir: string;
let file: string;
let db: TidemarkDatabase;
let audit: AuditTrail;

beforeAll(() => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-audit-'));
  file = path.join(dir, 'audit.sqlite');
  db = openDatabase(file);
  audit = new AuditTrail(new AuditRepository(db), () => new Date('2026-12-01T10:00:00Z'));
  for (let i = 1; i <= 6; i++) {
    audit.write({ userId: 'user-coordinator-101', role: 'site-coordinator' }, (record) =>
      record({ studyId: 'study-hlx-201', entity: 'session', entityId: `s${i}`, action: 'register', newValue: { i } }),
    );
  }
});
afterAll(() => {
  db.$client.close();
  fs.rmSync(dir, { recursive: true, force: true });
});

async function verifyCommand(): Promise<{ code: number; stdout: string }> {
  try {
    const { stdout } = await run('npx', ['tsx', 'server/cli/audit-verify.ts', '--database', file], { cwd: process.cwd() });
    return { code: 0, stdout };
  } catch (error) {
    const failed = error as { code: number; stdout: string };
    return { code: failed.code, stdout: failed.stdout };
  }
}

describe('the audit trail', () => {
  it('rolls back the audit rows with the change when the change fails', () => {
    expect(() =>
      audit.write({ userId: 'u', role: 'site-coordinator' }, (record) => {
        record({ entity: 'session', entityId: 'doomed', action: 'register' });
        throw new Error('the change failed');
      }),
    ).toThrow('the change failed');
    expect(db.$client.prepare(`select count(*) from audit_events where entity_id = 'doomed'`).pluck().get()).toBe(0);
    expect(audit.verify()).toMatchObject({ ok: true, rowsChecked: 6 });
  });

  it('refuses UPDATE and DELETE through SQLite itself', () => {
    expect(() => db.$client.prepare(`update audit_events set reason = 'x' where sequence = 2`).run()).toThrow(/append-only/);
    expect(() => db.$client.prepare(`delete from audit_events where sequence = 2`).run()).toThrow(/append-only/);
  });

  it('the verify command reports an intact chain with exit 0', async () => {
    const { code, stdout } = await verifyCommand();
    expect(code).toBe(0);
    expect(stdout).toMatch(/intact: 6 rows verified/);
  });

  it('with the triggers dropped, a changed row is named by the verify command with exit 1', async () => {
    const raw = new Sqlite(file);
    raw.exec('drop trigger audit_events_no_update');
    raw.prepare(`update audit_events set new_value = '{"i":42}' where sequence = 4`).run();
    raw.close();
    const { code, stdout } = await verifyCommand();
    expect(code).toBe(1);
    expect(stdout).toMatch(/BROKEN at row 4: row 4 was changed after it was written/);
  });
});
