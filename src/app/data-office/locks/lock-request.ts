import { lockScopeSchema, type CreateLock, type LockScope } from '@shared/contracts/locks';
import type { SignatureManifestation } from '@shared/contracts/reading';

/** The page's own path: the re-authentication round trip comes back here. */
export const LOCKS_PAGE_PATH = '/data-office/locks';

/** The server's minimum length of a lock or unlock reason (shared/contracts/locks.ts). */
export const MIN_REASON_LENGTH = 3;

/** What the lock form holds. `target` is a site number, subject code, visit code or session id; empty for the study. */
export interface LockForm {
  readonly scope: LockScope;
  readonly target: string;
  /** For a session lock: the subject whose sessions are listed to choose from. */
  readonly subjectCode: string;
  readonly reason: string;
}

/** A signing action waiting for the signer to confirm their identity. */
export type PendingSignature =
  | ({ readonly kind: 'lock'; readonly studyId: string } & LockForm)
  | { readonly kind: 'unlock'; readonly studyId: string; readonly lockId: string; readonly reason: string };

/** The query parameters the page reads (route input binding). */
export interface LocksPageQuery {
  readonly study?: string;
  readonly pending?: string;
  readonly scope?: string;
  readonly target?: string;
  readonly subject?: string;
  readonly reason?: string;
  readonly lockId?: string;
  readonly reauthentication?: string;
}

/** The request body for a filled form, or the problem in words. */
export function lockRequestOf(form: LockForm): { request: CreateLock } | { problem: string } {
  const reason = form.reason.trim();
  const target = form.target.trim();
  if (form.scope !== 'study' && !target) return { problem: TARGET_MISSING[form.scope] };
  if (reason.length < MIN_REASON_LENGTH) return { problem: `Give the reason for locking (at least ${MIN_REASON_LENGTH} characters).` };
  return { request: form.scope === 'study' ? { scope: 'study', reason } : { scope: form.scope, scopeId: target, reason } };
}

const TARGET_MISSING: Record<Exclude<LockScope, 'study'>, string> = {
  site: 'Choose the site to lock.',
  subject: 'Give the code of the subject to lock.',
  visit: 'Choose the visit to lock.',
  session: 'Find the subject, then choose the session to lock.',
};

/**
 * This page's path with the pending action in the query, for `returnTo`: after the password entry
 * the page comes back filled in and carries on.
 */
export function returnPathFor(pending: PendingSignature): string {
  const params = new URLSearchParams({ study: pending.studyId, pending: pending.kind });
  if (pending.kind === 'lock') {
    params.set('scope', pending.scope);
    if (pending.target) params.set('target', pending.target);
    if (pending.subjectCode) params.set('subject', pending.subjectCode);
  } else {
    params.set('lockId', pending.lockId);
  }
  params.set('reason', pending.reason);
  return `${LOCKS_PAGE_PATH}?${params.toString()}`;
}

/** The pending action a return from re-authentication carries, or null when the query holds none (or a broken one). */
export function pendingFrom(query: LocksPageQuery): PendingSignature | null {
  if (!query.study || !query.reason) return null;
  if (query.pending === 'unlock' && query.lockId) {
    return { kind: 'unlock', studyId: query.study, lockId: query.lockId, reason: query.reason };
  }
  const scope = lockScopeSchema.safeParse(query.scope);
  if (query.pending !== 'lock' || !scope.success) return null;
  return { kind: 'lock', studyId: query.study, scope: scope.data, target: query.target ?? '', subjectCode: query.subject ?? '', reason: query.reason };
}

/** What to tell the user about a re-authentication that did not confirm them; null when it did (or none happened). */
export function reauthenticationProblem(outcome: string | undefined): string | null {
  if (outcome === undefined || outcome === 'confirmed') return null;
  const why = REAUTHENTICATION_PROBLEMS[outcome] ?? 'Your identity could not be confirmed.';
  return `${why} Nothing was signed; your entries are kept below, sign again when ready.`;
}

const REAUTHENTICATION_PROBLEMS: Readonly<Record<string, string>> = {
  'reauthentication-mismatch': 'You confirmed your identity as another person than the one signed in here.',
  'idp-refused': 'The sign-in page did not confirm your identity.',
  'session-required': 'Only a browser session can sign.',
};

/** "Priya Halloran · Locked · 2026-12-02 10:15:00 UTC": a signature as shown with its record (21 CFR 11.50). */
export function signatureLine(signature: SignatureManifestation): string {
  const meaning = signature.meaning.charAt(0).toUpperCase() + signature.meaning.slice(1);
  return `${signature.printedName} · ${meaning} · ${utcText(signature.signedAt)}`;
}

/** An ISO time as "YYYY-MM-DD HH:MM:SS UTC". */
export function utcText(iso: string): string {
  const time = new Date(iso);
  return Number.isNaN(time.getTime()) ? iso : `${time.toISOString().slice(0, 19).replace('T', ' ')} UTC`;
}
