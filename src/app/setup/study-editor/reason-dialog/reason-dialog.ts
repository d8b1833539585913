import { ChangeDetectionStrategy, Component, inject, signal } from '@angular/core';
import { MatButton } from '@angular/material/button';
import {
  MAT_DIALOG_DATA,
  MatDialogActions,
  MatDialogClose,
  MatDialogContent,
  MatDialogRef,
  MatDialogTitle,
} from '@angular/material/dialog';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatInput } from '@angular/material/input';

/** What the reason dialog says. */
export interface ReasonDialogData {
  readonly title: string;
  /** Why a reason is asked for, e.g. the server's own message. */
  readonly message: string;
  /** Label of the button that sends the change. */
  readonly confirmLabel: string;
}

/** Longest reason the server accepts. */
const REASON_MAX_LENGTH = 1000;

/**
 * Asks for the reason behind a change, for the audit trail. Closes with the trimmed reason, or
 * with nothing when the person cancels.
 */
@Component({
  selector: 'app-reason-dialog',
  imports: [MatDialogTitle, MatDialogContent, MatDialogActions, MatDialogClose, MatButton, MatFormField, MatLabel, MatHint, MatInput],
  template: `
    <h2 mat-dialog-title>{{ data.title }}</h2>
    <mat-dialog-content>
      <p class="why">{{ data.message }}</p>
      <mat-form-field class="reason">
        <mat-label>Reason</mat-label>
        <textarea
          matInput
          required
          rows="3"
          data-testid="reason-input"
          [attr.aria-invalid]="showProblem()"
          [attr.maxlength]="maxLength"
          [value]="reason()"
          (input)="readReason($event)"
        ></textarea>
        <mat-hint>Recorded in the audit trail with your name and the time.</mat-hint>
      </mat-form-field>
      @if (showProblem()) {
        <p class="problem" role="alert">Give the reason for this change.</p>
      }
    </mat-dialog-content>
    <mat-dialog-actions align="end">
      <button mat-button type="button" mat-dialog-close>Cancel</button>
      <button mat-flat-button type="button" (click)="confirm()">{{ data.confirmLabel }}</button>
    </mat-dialog-actions>
  `,
  styles: `
    .why {
      max-width: 32rem;
    }
    .reason {
      width: 100%;
    }
    .problem {
      margin: 0;
      color: var(--mat-sys-error);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReasonDialog {
  protected readonly data = inject<ReasonDialogData>(MAT_DIALOG_DATA);
  private readonly dialogRef = inject<MatDialogRef<ReasonDialog, string>>(MatDialogRef);

  protected readonly maxLength = REASON_MAX_LENGTH;
  protected readonly reason = signal('');
  /** Whether the person tried to confirm without a reason. */
  protected readonly showProblem = signal(false);

  protected readReason(event: Event): void {
    this.reason.set((event.target as HTMLTextAreaElement).value);
    if (this.reason().trim()) this.showProblem.set(false);
  }

  protected confirm(): void {
    const reason = this.reason().trim();
    if (!reason) {
      this.showProblem.set(true);
      return;
    }
    this.dialogRef.close(reason);
  }
}
