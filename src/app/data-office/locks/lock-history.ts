import { NgTemplateOutlet } from '@angular/common';
import { ChangeDetectionStrategy, Component, computed, input, linkedSignal, output } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';

import { LOCK_SCOPE_LABELS, type LockList, type LockView } from '@shared/contracts/locks';
import { MIN_REASON_LENGTH, signatureLine, utcText } from './lock-request';

/** An unlock being written: which lock, and the reason so far. */
export interface UnlockDraft {
  readonly lockId: string;
  readonly reason: string;
}

/** An unlock to sign. */
export interface UnlockRequest {
  readonly lock: LockView;
  readonly reason: string;
}

/**
 * Active and past locks, each with who locked it, when and why, and its signatures as signed
 * records show them (21 CFR 11.50: printed name, meaning, UTC time) with whether each still
 * matches the lock. An active lock can be unlocked with a reason.
 */
@Component({
  selector: 'app-lock-history',
  imports: [MatButton, MatFormField, MatHint, MatIcon, MatInput, MatLabel, NgTemplateOutlet],
  templateUrl: './lock-history.html',
  styleUrl: './lock-history.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class LockHistory {
  readonly locks = input.required<LockList>();
  /** Whether an unlock is being sent. */
  readonly busy = input(false);
  /** An unlock form to open again, filled in (after an unconfirmed re-authentication). */
  readonly resumed = input<UnlockDraft | null>(null);
  readonly unlock = output<UnlockRequest>();

  /** The unlock form open, if any. */
  protected readonly draft = linkedSignal<UnlockDraft | null>(() => this.resumed());
  protected readonly canUnlock = computed(() => !this.busy() && (this.draft()?.reason.trim().length ?? 0) >= MIN_REASON_LENGTH);



  /** The scope in words; the facts template's context is untyped, so the lookup is typed here. */

  protected scopeLabel(lock: LockView): string {

    return LOCK_SCOPE_LABELS[lock.scope];

  }
  protected readonly signatureLine = signatureLine;
  protected readonly utcText = utcText;
  protected readonly minReasonLength = MIN_REASON_LENGTH;

  protected openUnlock(lock: LockView): void {
    this.draft.set({ lockId: lock.id, reason: '' });
  }

  protected writeReason(reason: string): void {
    this.draft.update((draft) => (draft ? { ...draft, reason } : draft));
  }

  protected sendUnlock(lock: LockView): void {
    const draft = this.draft();
    if (!this.canUnlock() || draft?.lockId !== lock.id) return;
    this.unlock.emit({ lock, reason: draft.reason.trim() });
  }
}
