/**
 * Which sessions a release covers and whether it may go ahead: pure rules over rows the
 * repository read. A release takes locked data only: every session in scope must be covered by
 * an active lock and have a final read, or nothing is released.
 */
import { createHash } from 'node:crypto';
import type { Verdict } from '../../shared/spirometry/model.js';
import type { ReleaseEffort, ReleaseReadResult, ReleaseSession } from './release-model.js';

/**
 * A session as the repository lists it for deciding and ordering: ids, codes and order only. The
 * rest of what the files say of it ({@link SessionDetails}) is read a batch at a time, so that a
 * release of tens of thousands of sessions keeps little in memory.
 */
export interface SessionHead {
  readonly id: string;
  readonly siteId: string;
  readonly siteNumber: string;
  readonly subjectId: string;
  readonly subjectCode: string;
  readonly visitId: string;
  readonly visitCode: string;
  readonly visitOrdinal: number;
  readonly timepointCode: string;
  readonly timepointOrdinal: number;
  readonly bronchodilator: 'pre' | 'post';
  readonly status: string;
  readonly updatedAt: string;
}

/** The rest of a session: names of its schedule, time and place, demographics and device. */
export interface SessionDetails {
  readonly visitName: string;
  readonly timepointName: string;
  readonly testedAt: string;
  readonly timeZone: string;
  readonly ageYears: number;
  readonly heightCm: number;
  readonly weightKg: number | null;
  readonly sex: string;
  readonly technicianCode: string;
  readonly deviceManufacturer: string | null;
  readonly deviceModel: string | null;
  readonly deviceSerialNumber: string | null;
}

/** An active or lifted lock. */
export interface LockHead {
  readonly id: string;
  readonly scope: 'study' | 'site' | 'subject' | 'visit' | 'session';
  readonly scopeId: string;
  readonly lockedAt: string;
  readonly unlockedAt: string | null;
}

/** A signed read of a session. */
export interface SignedReadHead {
  readonly id: string;
  readonly sessionId: string;
  readonly uploadId: string;
  readonly kind: string;
  readonly version: number;
  readonly signedAt: string;
  readonly resultJson: string | null;
  readonly signerName: string;
}

/** What part of the study to release; null means all. */
export interface ScopeFilter {
  readonly siteIds: readonly string[] | null;
  readonly visitCodes: readonly string[] | null;
}

/** A session in scope that keeps the release from going ahead, and why. */
export interface Blocker {
  readonly session: SessionHead;
  readonly problem: 'not-locked' | 'no-final-read';
}

/** Release order of sessions: site, subject, visit, time point, pre before post, then id. */
export function compareSessions(a: SessionHead, b: SessionHead): number {
  return (
    compareText(a.siteNumber, b.siteNumber) ||
    compareText(a.subjectCode, b.subjectCode) ||
    a.visitOrdinal - b.visitOrdinal ||
    a.timepointOrdinal - b.timepointOrdinal ||
    (a.bronchodilator === b.bronchodilator ? 0 : a.bronchodilator === 'pre' ? -1 : 1) ||
    compareText(a.id, b.id)
  );
}

/** Code-unit order: the same on every machine, whatever the locale. */
function compareText(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/** The sessions of the scope, in release order. */
export function sessionsInScope(sessions: readonly SessionHead[], scope: ScopeFilter): SessionHead[] {
  const sites = scope.siteIds ? new Set(scope.siteIds) : null;
  const visits = scope.visitCodes ? new Set(scope.visitCodes) : null;
  return sessions.filter((session) => (!sites || sites.has(session.siteId)) && (!visits || visits.has(session.visitCode))).sort(compareSessions);
}

/** The earliest active lock covering the session (study, its site, subject, visit, or itself), as SessionRepository.activeLockOn. */
export function coveringLock(locks: readonly LockHead[], session: SessionHead): LockHead | undefined {
  let found: LockHead | undefined;
  for (const lock of locks) {
    if (lock.unlockedAt !== null) continue;
    const covers =
      lock.scope === 'study' ||
      (lock.scope === 'site' && lock.scopeId === session.siteId) ||
      (lock.scope === 'subject' && lock.scopeId === session.subjectId) ||
      (lock.scope === 'visit' && lock.scopeId === session.visitId) ||
      (lock.scope === 'session' && lock.scopeId === session.id);
    if (covers && (!found || lock.lockedAt < found.lockedAt)) found = lock;
  }
  return found;
}

/**
 * The final read of a final session: the signed adjudication read if there is one, else the
 * earliest signed read (as the site feedback takes it). Undefined while the session is not final.
 */
export function finalReadOf(session: Pick<SessionHead, 'status'>, signedReads: readonly SignedReadHead[]): SignedReadHead | undefined {
  if (session.status !== 'final') return undefined;
  const ordered = [...signedReads].sort((a, b) => compareText(a.signedAt, b.signedAt) || compareText(a.id, b.id));
  return ordered.find((read) => read.kind === 'adjudication') ?? ordered[0];
}

/** Every session in scope that is not covered by an active lock or has no final read. */
export function releaseBlockers(
  sessions: readonly SessionHead[],
  locks: readonly LockHead[],
  finalReads: ReadonlyMap<string, SignedReadHead>,
): Blocker[] {
  const blockers: Blocker[] = [];
  for (const session of sessions) {
    if (!coveringLock(locks, session)) blockers.push({ session, problem: 'not-locked' });
    else if (!finalReads.has(session.id)) blockers.push({ session, problem: 'no-final-read' });
  }
  return blockers;
}

/** "subject 101-001, visit V2, time point T0, pre-bronchodilator": how people name a session. */
export function sessionWords(session: SessionHead): string {
  return `subject ${session.subjectCode}, visit ${session.visitCode}, time point ${session.timepointCode}, ${session.bronchodilator}-bronchodilator`;
}

/** The refusal message naming how many sessions block the release, with a few of them. */
export function blockersMessage(blockers: readonly Blocker[], shown = 5): string {
  const unlocked = blockers.filter((blocker) => blocker.problem === 'not-locked');
  const unread = blockers.filter((blocker) => blocker.problem === 'no-final-read');
  const list = (items: readonly Blocker[]) =>
    items
      .slice(0, shown)
      .map((blocker) => sessionWords(blocker.session))
      .join('; ') + (items.length > shown ? `; and ${items.length - shown} more` : '');
  const parts: string[] = [];
  if (unlocked.length) parts.push(`${plural(unlocked.length, 'session is', 'sessions are')} not locked (${list(unlocked)})`);
  if (unread.length) parts.push(`${plural(unread.length, 'locked session has', 'locked sessions have')} no final read (${list(unread)})`);
  return `Only locked data with final reads can be released: ${parts.join(', and ')}. Nothing was released.`;
}

function plural(count: number, one: string, many: string): string {
  return `${count} ${count === 1 ? one : many}`;
}

/** A session of the study and one of its signed reads (null when it has none), as the fingerprint reads them. */
export interface FingerprintRow {
  readonly sessionId: string;
  readonly updatedAt: string;
  readonly status: string;
  readonly siteId: string;
  readonly visitCode: string;
  readonly read: Pick<SignedReadHead, 'id' | 'kind' | 'version' | 'signedAt' | 'uploadId'> | null;
}

/**
 * SHA-256 over what the release is built from: each session in scope with its last change, and
 * its final read with its version, time of signing and file. Any change to the released data
 * between the order and the files changes it. The rows come ordered by session id, a session's
 * reads together, so that only one session is held at a time however large the study.
 */
export function dataFingerprint(rows: Iterable<FingerprintRow>, scope: ScopeFilter): string {
  const hash = createHash('sha256');
  const sites = scope.siteIds ? new Set(scope.siteIds) : null;
  const visits = scope.visitCodes ? new Set(scope.visitCodes) : null;
  let current: FingerprintRow | undefined;
  let reads: SignedReadHead[] = [];
  const add = () => {
    if (!current || (sites && !sites.has(current.siteId)) || (visits && !visits.has(current.visitCode))) return;
    const read = finalReadOf({ status: current.status }, reads);
    hash.update(`${current.sessionId}|${current.updatedAt}|${read?.id ?? ''}|${read?.version ?? ''}|${read?.signedAt ?? ''}|${read?.uploadId ?? ''}\n`);
  };
  for (const row of rows) {
    if (row.sessionId !== current?.sessionId) {
      if (current && row.sessionId < current.sessionId) throw new Error('The fingerprint needs its rows ordered by session id.');
      add();
      current = row;
      reads = [];
    }
    if (row.read) reads.push({ ...row.read, sessionId: row.sessionId, resultJson: null, signerName: '' });
  }
  add();
  return hash.digest('hex');
}

/** The latest change in the released data: what the transport files carry as their date. */
export function dataAsOf(sessions: readonly SessionHead[], finalReads: ReadonlyMap<string, SignedReadHead>): string {
  let latest = '';
  for (const session of sessions) {
    if (session.updatedAt > latest) latest = session.updatedAt;
    const signedAt = finalReads.get(session.id)?.signedAt ?? '';
    if (signedAt > latest) latest = signedAt;
  }
  return latest;
}

/** An effort as the repository reads it, with the final read's verdict on it if any. */
export interface EffortFacts {
  readonly id: string;
  readonly effortIndex: number;
  readonly label: string;
  readonly fev1L: number | null;
  readonly fvcL: number | null;
  readonly pefLPerS: number | null;
  readonly fef2575LPerS: number | null;
  readonly fetS: number | null;
  readonly bevL: number | null;
  readonly suggestedFev1Verdict: string;
  readonly suggestedFvcVerdict: string;
  /** Engine finding codes separated by ";" (empty when none). */
  readonly engineFindings: string;
}

/** The reader's verdict on one effort. */
export interface VerdictFacts {
  readonly effortIndex: number;
  readonly fev1Verdict: string;
  readonly fvcVerdict: string;
  readonly findingsJson: string;
  readonly comment: string;
}

/** Puts one released session together; where the read has no verdict on an effort, the engine's suggestion stands. */
export function assembleSession(
  studyCode: string,
  session: SessionHead,
  details: SessionDetails,
  lock: LockHead,
  read: SignedReadHead,
  result: ReleaseReadResult,
  effortCount: number,
  efforts: readonly EffortFacts[],
  verdicts: readonly VerdictFacts[],
): ReleaseSession {
  const byIndex = new Map(verdicts.map((verdict) => [verdict.effortIndex, verdict]));
  const releaseEfforts: ReleaseEffort[] = [...efforts]
    .sort((a, b) => a.effortIndex - b.effortIndex)
    .map((effort) => {
      const verdict = byIndex.get(effort.effortIndex);
      return {
        id: effort.id,
        effortIndex: effort.effortIndex,
        label: effort.label,
        fev1L: effort.fev1L,
        fvcL: effort.fvcL,
        pefLPerS: effort.pefLPerS,
        fef2575LPerS: effort.fef2575LPerS,
        fetS: effort.fetS,
        bevL: effort.bevL,
        suggestedFev1Verdict: effort.suggestedFev1Verdict as Verdict,
        suggestedFvcVerdict: effort.suggestedFvcVerdict as Verdict,
        fev1Verdict: (verdict?.fev1Verdict ?? effort.suggestedFev1Verdict) as Verdict,
        fvcVerdict: (verdict?.fvcVerdict ?? effort.suggestedFvcVerdict) as Verdict,
        engineFindings: effort.engineFindings ? effort.engineFindings.split(';') : [],
        readerFindings: verdict ? (JSON.parse(verdict.findingsJson) as string[]) : [],
        readerComment: verdict?.comment ?? '',
      };
    });
  return {
    id: session.id,
    studyCode,
    siteNumber: session.siteNumber,
    subjectCode: session.subjectCode,
    visitCode: session.visitCode,
    visitName: details.visitName,
    visitNumber: session.visitOrdinal,
    timepointCode: session.timepointCode,
    timepointName: details.timepointName,
    timepointNumber: session.timepointOrdinal,
    bronchodilator: session.bronchodilator,
    testedAt: details.testedAt,
    timeZone: details.timeZone,
    ageYears: details.ageYears,
    heightCm: details.heightCm,
    weightKg: details.weightKg,
    sex: details.sex,
    technicianCode: details.technicianCode,
    deviceManufacturer: details.deviceManufacturer,
    deviceModel: details.deviceModel,
    deviceSerialNumber: details.deviceSerialNumber,
    lock: { scope: lock.scope, lockedAt: lock.lockedAt },
    effortCount,
    read: { id: read.id, kind: read.kind, signerName: read.signerName, signedAt: read.signedAt, result },
    efforts: releaseEfforts,
  };
}
