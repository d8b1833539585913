/**
 * The data fingerprint as the release computes it from SQLite, one row at a time: it must pick
 * the same final read as the rule in release-scope (our rule, issue 7: the signed adjudication
 * read, else the earliest signed read) and change with any change to the data in scope.
 */
import { createHash } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from '@jest/globals';
import { openDatabase, type TidemarkDatabase } from '../db/database.js';
import { ReleaseFixtureRepository } from './release-fixture-repository.js';
import { syntheticLockedStudy } from './release-fixtures.js';
import { ReleaseRepository } from './release-repository.js';
import { dataFingerprint, finalReadOf, sessionsInScope, type ScopeFilter } from './release-scope.js';

const STUDY = 'study-fingerprint';
const EVERYTHING: ScopeFilter = { siteIds: null, visitCodes: null };
let db: TidemarkDatabase;
let repository: ReleaseRepository;

const fingerprint = (scope: ScopeFilter = EVERYTHING) => dataFingerprint(repository.fingerprintRows(STUDY), scope);
const run = (statement: string, ...values: unknown[]) => db.$client.prepare(statement).run(...values);

beforeAll(() => {
  db = openDatabase(':memory:');
  for (const id of ['coordinator', 'reader', 'data-manager']) run(`insert into users (id, email, name) values (?, ?, ?)`, id, `${id}@tidemark.example`, id);
  const fixtures = new ReleaseFixtureRepository(db);
  for (const rows of syntheticLockedStudy({
    studyId: STUDY,
    studyCode: 'FP-01',
    efforts: 48,
    effortsPerSession: 4,
    sites: 2,
    subjectsPerSite: 2,
    registeredBy: 'coordinator',
    reader: { id: 'reader', name: 'Reader' },
    lockedBy: 'data-manager',
    sessionsPerBatch: 5,
  })) {
    fixtures.insert(rows);
  }
  repository = new ReleaseRepository(db);
});

afterAll(() => {
  db.$client.close();
});

describe('the data fingerprint read from SQLite', () => {
  it('hashes each session with the final read the release rule picks, in session id order', () => {
    const sessions = sessionsInScope(repository.sessionHeads(STUDY), EVERYTHING).sort((a, b) => (a.id < b.id ? -1 : 1));
    const reads = repository.signedReads(STUDY);
    expect(sessions).toHaveLength(12);
    const hash = createHash('sha256');
    for (const session of sessions) {
      const read = finalReadOf(session, reads.filter((each) => each.sessionId === session.id));
      expect(read).toBeDefined();
      hash.update(`${session.id}|${session.updatedAt}|${read!.id}|${read!.version}|${read!.signedAt}|${read!.uploadId}\n`);
    }
    expect(fingerprint()).toBe(hash.digest('hex'));
  });

  it('changes when a session, its final read or the reads it is chosen from change, and not for a session out of scope', () => {
    const [first, second] = repository.sessionHeads(STUDY).sort((a, b) => (a.id < b.id ? -1 : 1));
    const otherSite = repository.sessionHeads(STUDY).find((session) => session.siteId !== first.siteId)!;
    const firstSiteOnly: ScopeFilter = { siteIds: [first.siteId], visitCodes: null };
    const before = fingerprint();
    const beforeInScope = fingerprint(firstSiteOnly);

    run(`update test_sessions set updated_at = '2027-01-01T00:00:00.000Z' where id = ?`, otherSite.id);
    expect(fingerprint()).not.toBe(before);
    expect(fingerprint(firstSiteOnly)).toBe(beforeInScope);

    const afterSession = fingerprint();
    run(`update reads set version = version + 1 where session_id = ? and status = 'signed'`, first.id);
    expect(fingerprint()).not.toBe(afterSession);

    const afterVersion = fingerprint();
    run(`update reads set status = 'withdrawn' where session_id = ? and status = 'signed'`, second.id);
    expect(fingerprint()).not.toBe(afterVersion);
  });
});
