import { ChangeDetectionStrategy, Component, DestroyRef, type OnInit, computed, inject, input, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatOption, MatSelect } from '@angular/material/select';
import { Router } from '@angular/router';
import type { Observable } from 'rxjs';

import { LOCK_SCOPE_LABELS, lockScopeSchema, type LockScope, type LockView } from '@shared/contracts/locks';
import type { SessionSummary } from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { DataManagerStudies } from '../data-manager-studies';
import { DataOfficeLocksApi, needsReauthentication, reauthenticateUrl } from '../data-office-locks-api';
import { LockHistory, type UnlockDraft, type UnlockRequest } from './lock-history';
import {
  LOCKS_PAGE_PATH,
  MIN_REASON_LENGTH,
  lockRequestOf,
  pendingFrom,
  reauthenticationProblem,
  returnPathFor,
  type PendingSignature,
} from './lock-request';
import { PageLeave } from './page-leave';

/** "V3 · PRE-DOSE · pre-bronchodilator · tested 2026-11-20 · site 101 · locked". */
function sessionChoiceLabel(session: SessionSummary): string {
  const locked = session.locked ? ' · locked' : '';
  return `${session.visitCode} · ${session.timepointCode} · ${session.bronchodilator}-bronchodilator · tested ${session.testedAt.slice(0, 10)} · site ${session.siteNumber}${locked}`;
}

/**
 * The data manager's locks page: lock a session, subject, site, visit or the whole study with a
 * reason and an electronic signature, unlock with a reason and a signature, and see every lock
 * with its signatures. When the server asks for a fresh password entry, the page sends the
 * browser to the identity provider with the form in the return path, and carries on when it
 * comes back confirmed.
 */
@Component({
  selector: 'app-locks-page',
  imports: [LockHistory, MatButton, MatFormField, MatHint, MatIcon, MatInput, MatLabel, MatOption, MatSelect],
  templateUrl: './locks-page.html',
  styleUrl: './locks-page.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class LocksPage implements OnInit {
  private readonly api = inject(DataOfficeLocksApi);
  private readonly destroyRef = inject(DestroyRef);
  private readonly router = inject(Router);
  private readonly pageLeave = inject(PageLeave);

  // Query parameters (route input binding): the study, and a signing action coming back from re-authentication.
  readonly study = input<string | undefined>(undefined);
  readonly pending = input<string | undefined>(undefined);
  readonly scope = input<string | undefined>(undefined);
  readonly target = input<string | undefined>(undefined);
  readonly subject = input<string | undefined>(undefined);
  readonly reason = input<string | undefined>(undefined);
  readonly lockId = input<string | undefined>(undefined);
  readonly reauthentication = input<string | undefined>(undefined);

  private readonly dataManagerStudies = new DataManagerStudies();
  protected readonly studies = this.dataManagerStudies.all;
  protected readonly currentStudy = this.dataManagerStudies.current;
  protected readonly studyId = this.dataManagerStudies.currentId;

  protected readonly locks = this.api.locksOf(() => this.studyId());
  protected readonly sites = this.api.sitesOf(() => this.studyId());
  protected readonly schedule = this.api.scheduleOf(() => this.studyId());

  protected readonly formScope = signal<LockScope>('session');
  protected readonly formTarget = signal('');
  protected readonly formSubjectCode = signal('');
  protected readonly formReason = signal('');
  /** The subject code last looked up for a session lock; the session list follows it. */
  protected readonly searchedCode = signal<string | undefined>(undefined);
  protected readonly sessions = this.api.sessionsOfSubject(
    () => this.studyId(),
    () => (this.formScope() === 'session' ? this.searchedCode() : undefined),
  );
  protected readonly sessionList = computed<SessionSummary[]>(() => (this.sessions.hasValue() ? this.sessions.value().items : []));

  /** Whether a lock or unlock is being sent. */
  protected readonly busy = signal(false);
  protected readonly problem = signal<string | null>(null);
  protected readonly done = signal<string | null>(null);
  /** An unlock that came back unconfirmed from re-authentication: its form opens again, filled in. */
  protected readonly resumedUnlock = signal<UnlockDraft | null>(null);

  protected readonly scopeLabels = LOCK_SCOPE_LABELS;
  protected readonly scopes = lockScopeSchema.options;
  protected readonly minReasonLength = MIN_REASON_LENGTH;
  protected readonly choiceLabel = sessionChoiceLabel;
  protected readonly canLock = computed(() => !this.busy() && 'request' in lockRequestOf(this.form()));

  ngOnInit(): void {
    // Read once: after the query is cleared below, the form keeps what the user had entered.
    this.dataManagerStudies.choose(this.study());
    const pending = pendingFrom({
      study: this.study(),
      pending: this.pending(),
      scope: this.scope(),
      target: this.target(),
      subject: this.subject(),
      reason: this.reason(),
      lockId: this.lockId(),
    });
    if (!pending) return;
    if (pending.kind === 'lock') {
      this.formScope.set(pending.scope);
      this.formTarget.set(pending.target);
      this.formSubjectCode.set(pending.subjectCode);
      this.searchedCode.set(pending.subjectCode || undefined);
      this.formReason.set(pending.reason);
    } else {
      this.resumedUnlock.set({ lockId: pending.lockId, reason: pending.reason });
    }
    void this.router.navigate([LOCKS_PAGE_PATH], { queryParams: { study: pending.studyId }, replaceUrl: true });
    const problem = reauthenticationProblem(this.reauthentication());
    if (problem) this.problem.set(problem);
    // Back from a confirmed password entry: finish what was asked before leaving.
    else if (this.reauthentication() === 'confirmed') this.sign(pending);
  }

  protected chooseStudy(studyId: string): void {
    this.dataManagerStudies.choose(studyId);
    this.formTarget.set('');
    this.searchedCode.set(undefined);
  }

  protected chooseScope(scope: LockScope): void {
    this.formScope.set(scope);
    this.formTarget.set('');
  }

  protected findSessions(): void {
    this.searchedCode.set(this.formSubjectCode().trim() || undefined);
    this.formTarget.set('');
  }

  protected submitLock(): void {
    const studyId = this.studyId();
    const checked = lockRequestOf(this.form());
    if (!studyId || 'problem' in checked) {
      this.problem.set('problem' in checked ? checked.problem : 'Choose a study first.');
      return;
    }
    this.sign({ kind: 'lock', studyId, ...this.form() });
  }

  protected submitUnlock(request: UnlockRequest): void {
    const studyId = this.studyId();
    if (!studyId) return;
    this.sign({ kind: 'unlock', studyId, lockId: request.lock.id, reason: request.reason });
  }

  private form() {
    return { scope: this.formScope(), target: this.formTarget(), subjectCode: this.formSubjectCode(), reason: this.formReason() };
  }

  /** Sends the signed action; a request for re-authentication leaves the page with the action in the return path. */
  private sign(pending: PendingSignature): void {
    let request: Observable<LockView>;
    if (pending.kind === 'unlock') {
      request = this.api.unlock(pending.studyId, pending.lockId, pending.reason);
    } else {
      const checked = lockRequestOf(pending);
      if ('problem' in checked) {
        this.problem.set(checked.problem);
        return;
      }
      request = this.api.lock(pending.studyId, checked.request);
    }
    this.busy.set(true);
    this.problem.set(null);
    this.done.set(null);
    request.pipe(takeUntilDestroyed(this.destroyRef)).subscribe({
      next: (lock) => {
        this.busy.set(false);
        this.done.set(pending.kind === 'lock' ? `Locked and signed: ${lock.target}.` : `Unlocked and signed: ${lock.target}.`);
        if (pending.kind === 'lock') {
          this.formTarget.set('');
          this.formReason.set('');
        }
        this.locks.reload();
        this.sessions.reload();
      },
      error: (error: unknown) => {
        this.busy.set(false);
        if (needsReauthentication(error)) {
          this.pageLeave.goTo(reauthenticateUrl(returnPathFor(pending)));
          return;
        }
        // Expected refusals (open queries, an existing lock, an unknown target) are explained; anything else is unexpected.
        if (!(error instanceof ApiError)) throw error;
        this.problem.set(error.message);
      },
    });
  }
}
