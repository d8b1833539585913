/**
 * Which sessions a reader may claim, as what kind of read, and by when: pure rules, no I/O. A claim
 * applies them to its session; the queue states the same rules in SQL (read-queue-repository.ts),
 * and that file's test checks the two against each other.
 */
import type { ReadKind } from '../../shared/contracts/reading.js';

/** Session statuses in which a session can still take a first or second read. */
export const AWAITING_READ_STATUSES: readonly string[] = ['checked', 'in-reading'];

/** What the rules need of one read of the session. */
export interface ReadOfSession {
  readonly readerId: string;
  readonly kind: ReadKind;
  readonly status: 'in-progress' | 'withdrawn' | 'signed';
}

/** Whether a reader may claim a session, and if not, why. */
export type ReadEligibility =
  | { readonly eligible: true; readonly kind: 'first' | 'second' }
  | { readonly eligible: false; readonly reason: 'not-awaiting-read' | 'already-yours' | 'already-claimed' };

/** Reads that count toward the over-read: first and second reads in progress or signed. */
export function liveOverReads<T extends ReadOfSession>(reads: readonly T[]): T[] {
  return reads.filter((read) => read.kind !== 'adjudication' && read.status !== 'withdrawn');
}

/**
 * Whether the session is read twice. Decided at the first claim (from the study's design and the
 * session's fixed sample draw) and stored; until then the same deterministic decision is computed.
 */
export function effectiveDualRead(storedDualRead: boolean, liveReadCount: number, decideNow: () => boolean): boolean {
  return liveReadCount === 0 ? decideNow() : storedDualRead;
}

/**
 * A session is open to a reader while it awaits a read, has fewer live reads than it needs (one,
 * or two when dual), and the reader has no live read of it: in a dual design the two reads must
 * come from two readers, and nobody holds two claims on one session.
 */
export function readEligibility(
  session: { readonly status: string; readonly dualRead: boolean },
  reads: readonly ReadOfSession[],
  readerId: string,
): ReadEligibility {
  if (!AWAITING_READ_STATUSES.includes(session.status)) return { eligible: false, reason: 'not-awaiting-read' };
  const live = liveOverReads(reads);
  if (live.some((read) => read.readerId === readerId)) return { eligible: false, reason: 'already-yours' };
  const needed = session.dualRead ? 2 : 1;
  if (live.length >= needed) return { eligible: false, reason: 'already-claimed' };
  return { eligible: true, kind: live.length === 0 ? 'first' : 'second' };
}

/** When the over-read is due: the file's check time plus the study's turnaround. */
export function readDueAt(checkedAt: string, turnaroundHours: number): string {
  return new Date(Date.parse(checkedAt) + turnaroundHours * 3600_000).toISOString();
}

/** What the study's blinding options let readers see of a session's schedule. */
export interface ReaderBlinding {
  readonly showVisit: boolean;
  readonly showTimepoint: boolean;
  readonly showBronchodilator: boolean;
}

/** Reads studies.blindingJson; an option that is missing or unreadable stays hidden. */
export function readerBlinding(blindingJson: string): ReaderBlinding {
  let options: Record<string, unknown> = {};
  try {
    const parsed: unknown = JSON.parse(blindingJson);
    if (parsed && typeof parsed === 'object') options = parsed as Record<string, unknown>;
  } catch {
    // A malformed setting must not unblind: everything optional stays hidden.
  }
  return {
    showVisit: options['readersSeeVisit'] === true,
    showTimepoint: options['readersSeeTimepoint'] === true,
    showBronchodilator: options['readersSeeBronchodilator'] === true,
  };
}
