import { ChangeDetectionStrategy, Component, computed, inject, signal } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatCheckbox } from '@angular/material/checkbox';
import { MatDialogActions, MatDialogClose, MatDialogContent, MatDialogRef, MatDialogTitle } from '@angular/material/dialog';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatInput } from '@angular/material/input';

import { openQuerySchema } from '@shared/contracts/reading';

/** A query as the reader writes it. */
export interface QueryDraft {
  readonly question: string;
  readonly requestRepeat: boolean;
}

/**
 * Writes a query to the site about this session: the question, and whether the site is asked to
 * repeat the test within the visit window. Closes with the query, or nothing when cancelled.
 */
@Component({
  selector: 'app-open-query-dialog',
  imports: [MatDialogTitle, MatDialogContent, MatDialogActions, MatDialogClose, MatButton, MatCheckbox, MatFormField, MatLabel, MatHint, MatInput],
  template: `
    <h2 mat-dialog-title>Open a query to the site</h2>
    <mat-dialog-content>
      <p class="why">The site sees your question without your name, and answers it in the site desk.</p>
      <mat-form-field class="question">
        <mat-label>Question</mat-label>
        <textarea
          matInput
          required
          rows="4"
          maxlength="4000"
          data-testid="query-question"
          [attr.aria-invalid]="showProblem()"
          [value]="question()"
          (input)="question.set($any($event.target).value)"
        ></textarea>
        <mat-hint>Say what you saw and what you need from the site.</mat-hint>
      </mat-form-field>
      @if (showProblem() && problem(); as problem) {
        <p class="problem" role="alert">{{ problem }}</p>
      }
      <mat-checkbox [checked]="requestRepeat()" (change)="requestRepeat.set($event.checked)">
        Ask the site to repeat the test within the visit window
      </mat-checkbox>
    </mat-dialog-content>
    <mat-dialog-actions align="end">
      <button mat-button type="button" mat-dialog-close>Cancel</button>
      <button mat-flat-button type="button" data-testid="send-query" (click)="send()">Send the query</button>
    </mat-dialog-actions>
  `,
  styles: `
    .question {
      width: 100%;
    }
    .problem {
      margin: 0 0 0.5rem;
      color: var(--mat-sys-error);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class OpenQueryDialog {
  private readonly dialogRef = inject<MatDialogRef<OpenQueryDialog, QueryDraft>>(MatDialogRef);

  protected readonly question = signal('');
  protected readonly requestRepeat = signal(false);
  /** Whether the reader tried to send a question the server would refuse. */
  protected readonly showProblem = signal(false);
  protected readonly problem = computed(() => {
    const parsed = openQuerySchema.safeParse({ question: this.question(), requestRepeat: this.requestRepeat() });
    return parsed.success ? null : `The question: ${parsed.error.issues[0].message}.`;
  });

  protected send(): void {
    const parsed = openQuerySchema.safeParse({ question: this.question(), requestRepeat: this.requestRepeat() });
    if (!parsed.success) {
      this.showProblem.set(true);
      return;
    }
    this.dialogRef.close(parsed.data);
  }
}
