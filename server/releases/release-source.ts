/**
 * The sessions of a release as the build reads them: the snapshot taken when the release was
 * ordered (sessions in scope, their locks, final reads and results), completed with efforts and
 * verdicts from the database a batch at a time. Used on the main thread and in the workbook worker.
 */
import type { ReleaseSource } from './release-builder.js';
import type { ReleaseReadResult, ReleaseSession } from './release-model.js';
import type { ReleaseRepository } from './release-repository.js';
import { assembleSession, coveringLock, type LockHead, type SessionHead, type SignedReadHead } from './release-scope.js';

/** The locked data of a scope at one moment (structured-cloneable, for the worker). */
export interface Snapshot {
  readonly sessions: SessionHead[];
  readonly locks: LockHead[];
  readonly finalReads: Map<string, SignedReadHead>;
  readonly results: Map<string, ReleaseReadResult>;
  readonly effortCounts: Map<string, number>;
}

/** Sessions read from the database at a time while files are written. */
const SESSIONS_PER_BATCH = 250;

/**
 * The snapshot's sessions for each pass of the build. With `keepEffortsUpTo`, a release of at
 * most that many efforts keeps its sessions after the first full read (about half a kilobyte per
 * effort) instead of reading them again on every pass; a larger one reads again.
 */
export function releaseSource(repository: ReleaseRepository, studyCode: string, snapshot: Snapshot, keepEffortsUpTo = 0): ReleaseSource {
  const read = function* (withEfforts: boolean): Generator<ReleaseSession> {
    for (let start = 0; start < snapshot.sessions.length; start += SESSIONS_PER_BATCH) {
      const batch = snapshot.sessions.slice(start, start + SESSIONS_PER_BATCH);
      const reads = batch.map((session) => snapshot.finalReads.get(session.id)!);
      const details = repository.sessionDetails(batch.map((session) => session.id));
      const efforts = withEfforts ? repository.effortsOfUploads(reads.map((finalRead) => finalRead.uploadId)) : undefined;
      const verdicts = withEfforts ? repository.verdictsOfReads(reads.map((finalRead) => finalRead.id)) : undefined;
      for (const [index, session] of batch.entries()) {
        const finalRead = reads[index];
        const sessionDetails = details.get(session.id);
        if (!sessionDetails) throw new Error(`Session ${session.id} is no longer in the database`);
        yield assembleSession(
          studyCode,
          session,
          sessionDetails,
          coveringLock(snapshot.locks, session)!,
          finalRead,
          snapshot.results.get(finalRead.id)!,
          snapshot.effortCounts.get(finalRead.uploadId) ?? 0,
          efforts?.get(finalRead.uploadId) ?? [],
          verdicts?.get(finalRead.id) ?? [],
        );
      }
    }
  };
  let effortTotal = 0;
  for (const finalRead of snapshot.finalReads.values()) effortTotal += snapshot.effortCounts.get(finalRead.uploadId) ?? 0;
  let kept: ReleaseSession[] | undefined;
  return {
    sessionCount: snapshot.sessions.length,
    *sessions({ withEfforts }): Generator<ReleaseSession> {
      if (kept) {
        yield* kept;
        return;
      }
      if (!withEfforts || effortTotal > keepEffortsUpTo) {
        yield* read(withEfforts);
        return;
      }
      const reading: ReleaseSession[] = [];
      for (const session of read(true)) {
        reading.push(session);
        yield session;
      }
      kept = reading;
    },
  };
}
