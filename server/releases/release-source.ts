/**
 * The sessions of a release as the build reads them. When the release is ordered, only the plan
 * is kept: which sessions, in release order, with which final read, under which locks. Everything
 * else (the sessions, their reads and results, efforts and verdicts) is read from the database a
 * batch at a time while the files are written, so that memory holds one batch, not the study;
 * the service checks the data fingerprint after the files are written.
 */
import { readResultSchema } from '../../shared/contracts/reading.js';
import type { ReleaseSource } from './release-builder.js';
import type { ReleaseSession } from './release-model.js';
import type { ReleaseRepository } from './release-repository.js';
import { assembleSession, coveringLock, type LockHead } from './release-scope.js';

/** What a release is built from, fixed when it is ordered. */
export interface ReleasePlan {
  /** In release order. */
  readonly sessions: readonly { readonly sessionId: string; readonly readId: string }[];
  /** The locks in force when the release was ordered. */
  readonly locks: readonly LockHead[];
  /** The latest change in the released data (ISO 8601 UTC). */
  readonly dataAsOf: string;
  /** Efforts of the released sessions' checked files, in all. */
  readonly effortCount: number;
}

/** The data of an ordered release changed while its files were being written; the message says how. */
export class ReleaseDataChanged extends Error {}

/** Sessions read from the database at a time while files are written (about 2,000 efforts). */
const SESSIONS_PER_BATCH = 50;

/**
 * The plan's sessions, in release order, each with everything the files say of it; without its
 * efforts (only their count) when a pass does not need them, which reads far less.
 */
export function releaseSource(repository: ReleaseRepository, studyCode: string, plan: ReleasePlan): ReleaseSource {
  return {
    sessionCount: plan.sessions.length,
    effortCount: plan.effortCount,
    *sessions({ withEfforts }): Generator<ReleaseSession> {
      for (let start = 0; start < plan.sessions.length; start += SESSIONS_PER_BATCH) {
        const batch = plan.sessions.slice(start, start + SESSIONS_PER_BATCH);
        const sessions = repository.sessionsById(batch.map((entry) => entry.sessionId));
        const reads = repository.signedReadsById(batch.map((entry) => entry.readId));
        const uploadIds = [...reads.values()].map((read) => read.uploadId);
        const efforts = withEfforts ? repository.effortsOfUploads(uploadIds) : undefined;
        const effortCounts = withEfforts ? undefined : repository.effortCountsOfUploads(uploadIds);
        const verdicts = withEfforts ? repository.verdictsOfReads(batch.map((entry) => entry.readId)) : undefined;
        for (const { sessionId, readId } of batch) {
          const session = sessions.get(sessionId);
          const read = reads.get(readId);
          // The data fingerprint would find these changes too, but only after every file was written.
          const changed = (what: string) => new ReleaseDataChanged(`${what} while the files were being written; ask for the release again.`);
          if (!session) throw changed(`Session ${sessionId} was deleted`);
          if (!read?.resultJson) throw changed(`The final read of session ${sessionId} was withdrawn`);
          const lock = coveringLock(plan.locks, session);
          if (!lock) throw changed(`Session ${sessionId} was moved out of the locked data`);
          const sessionEfforts = efforts?.get(read.uploadId) ?? [];
          yield assembleSession(
            studyCode,
            session,
            session,
            lock,
            read,
            readResultSchema.parse(JSON.parse(read.resultJson)),
            effortCounts ? (effortCounts.get(read.uploadId) ?? 0) : sessionEfforts.length,
            sessionEfforts,
            verdicts?.get(readId) ?? [],
          );
        }
      }
    },
  };
}
