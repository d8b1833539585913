import { ChangeDetectionStrategy, Component, DestroyRef, inject, input, output, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';

import { enrolSubjectSchema, type Subject } from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { SiteDeskApi } from '../site-desk-api';

/**
 * A small inline form to enrol a subject at the site. Not a `<form>`: it sits inside the register
 * form, and forms may not nest, so Enter is handled here and never submits the outer form.
 */
@Component({
  selector: 'app-enrol-subject',
  imports: [MatButton, MatIcon, MatFormField, MatLabel, MatHint, MatInput],
  template: `
    @if (open()) {
      <div class="enrol" role="group" aria-labelledby="enrol-heading">
        <p id="enrol-heading" class="enrol-heading">Enrol a new subject at this site</p>
        <mat-form-field subscriptSizing="dynamic">
          <mat-label>New subject code</mat-label>
          <input
            matInput
            autocomplete="off"
            [value]="code()"
            [attr.aria-invalid]="!!problem()"
            (input)="readCode($event)"
            (keydown.enter)="$event.preventDefault(); enrol()"
          />
          <mat-hint>The pseudonymous code from the study, never a name.</mat-hint>
        </mat-form-field>
        <div class="enrol-actions">
          <button mat-flat-button type="button" [disabled]="saving()" (click)="enrol()">Enrol</button>
          <button mat-button type="button" (click)="open.set(false)">Cancel</button>
        </div>
        @if (problem(); as message) {
          <p class="problem" role="alert">{{ message }}</p>
        }
      </div>
    } @else {
      <button mat-button type="button" (click)="open.set(true)">
        <mat-icon>person_add</mat-icon>
        Enrol a new subject
      </button>
    }
  `,
  styles: `
    .enrol {
      display: grid;
      gap: 0.5rem;
      padding: 0.75rem 1rem;
      border-left: 3px solid var(--mat-sys-tertiary);
      background: var(--mat-sys-surface-container-low);
    }
    .enrol-heading {
      margin: 0;
      font: var(--mat-sys-title-small);
    }
    .problem {
      margin: 0;
      color: var(--mat-sys-error);
    }
    .enrol-actions {
      display: flex;
      gap: 0.5rem;
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class EnrolSubject {
  private readonly api = inject(SiteDeskApi);
  private readonly destroyRef = inject(DestroyRef);

  readonly studyId = input.required<string>();
  readonly siteId = input.required<string>();
  readonly enrolled = output<Subject>();

  /** Whether the small form is shown. */
  protected readonly open = signal(false);
  protected readonly code = signal('');
  /** Whether the enrolment is being sent. */
  protected readonly saving = signal(false);
  protected readonly problem = signal('');

  protected readCode(event: Event): void {
    this.code.set((event.target as HTMLInputElement).value);
  }

  protected enrol(): void {
    const parsed = enrolSubjectSchema.safeParse({ code: this.code() });
    if (!parsed.success) {
      this.problem.set(parsed.error.issues[0]?.message ?? 'Check the subject code.');
      return;
    }
    this.problem.set('');
    this.saving.set(true);
    this.api
      .enrolSubject(this.studyId(), this.siteId(), parsed.data.code)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (subject) => {
          this.saving.set(false);
          this.code.set('');
          this.open.set(false);
          this.enrolled.emit(subject);
        },
        error: (error: unknown) => {
          this.saving.set(false);
          // ApiError: a duplicate code or a refusal the server explains; anything else is unexpected.
          if (!(error instanceof ApiError)) throw error;
          this.problem.set(error.message);
        },
      });
  }
}
