import { ChangeDetectionStrategy, Component, DestroyRef, inject, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { NonNullableFormBuilder, ReactiveFormsModule, Validators, type AbstractControl } from '@angular/forms';
import { MatButton } from '@angular/material/button';
import { MatDialogActions, MatDialogClose, MatDialogContent, MatDialogRef, MatDialogTitle } from '@angular/material/dialog';
import { MatError, MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatInput } from '@angular/material/input';
import { finalize } from 'rxjs';

import type { StudySetup } from '@shared/contracts/setup';
import { ApiError } from '../../core/http/api-error';
import { SetupApi } from '../setup-api';
import { fieldErrorText, showServerFieldErrors } from '../study-editor/server-field-errors';

/**
 * Creates a study from its code, title, sponsor and indication; the rest is set in the study
 * editor. Closes with the created study.
 */
@Component({
  selector: 'app-new-study-dialog',
  imports: [
    ReactiveFormsModule,
    MatDialogTitle,
    MatDialogContent,
    MatDialogActions,
    MatDialogClose,
    MatButton,
    MatFormField,
    MatLabel,
    MatHint,
    MatError,
    MatInput,
  ],
  template: `
    <form [formGroup]="form" (ngSubmit)="create()" novalidate>
      <h2 mat-dialog-title>New study</h2>
      <mat-dialog-content class="content">
        <p class="hint">
          You become the study admin of the new study. It starts with the ATS/ERS 2019 rule set, single reads and no
          sites; set the rest in the study editor. Demo studies use invented names.
        </p>
        <mat-form-field>
          <mat-label>Study code</mat-label>
          <input matInput formControlName="code" required autocomplete="off" />
          <mat-hint>Letters, digits and "-", e.g. ABC-301.</mat-hint>
          <mat-error>{{ fieldError(form.controls.code, 'study code') }}</mat-error>
        </mat-form-field>
        <mat-form-field>
          <mat-label>Title</mat-label>
          <input matInput formControlName="title" required autocomplete="off" />
          <mat-error>{{ fieldError(form.controls.title, 'title') }}</mat-error>
        </mat-form-field>
        <mat-form-field>
          <mat-label>Sponsor</mat-label>
          <input matInput formControlName="sponsor" required autocomplete="off" />
          <mat-error>{{ fieldError(form.controls.sponsor, 'sponsor') }}</mat-error>
        </mat-form-field>
        <mat-form-field>
          <mat-label>Indication</mat-label>
          <input matInput formControlName="indication" required autocomplete="off" />
          <mat-error>{{ fieldError(form.controls.indication, 'indication') }}</mat-error>
        </mat-form-field>
        @if (problem(); as message) {
          <p class="problem" role="alert">{{ message }}</p>
        }
      </mat-dialog-content>
      <mat-dialog-actions align="end">
        <button mat-button type="button" mat-dialog-close>Cancel</button>
        <button mat-flat-button type="submit" [disabled]="saving()">Create study</button>
      </mat-dialog-actions>
    </form>
  `,
  styles: `
    .content {
      display: grid;
      gap: 0.25rem;
      min-width: min(30rem, 80vw);
    }
    .hint {
      max-width: 32rem;
      margin-top: 0;
      color: var(--mat-sys-on-surface-variant);
    }
    .problem {
      margin: 0;
      color: var(--mat-sys-error);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class NewStudyDialog {
  private readonly api = inject(SetupApi);
  private readonly destroyRef = inject(DestroyRef);
  private readonly dialogRef = inject<MatDialogRef<NewStudyDialog, StudySetup>>(MatDialogRef);

  protected readonly form = inject(NonNullableFormBuilder).group({
    code: ['', [Validators.required, Validators.maxLength(32), Validators.pattern(/^\s*[A-Za-z0-9][A-Za-z0-9._-]*\s*$/)]],
    title: ['', [Validators.required, Validators.maxLength(300)]],
    sponsor: ['', [Validators.required, Validators.maxLength(200)]],
    indication: ['', [Validators.required, Validators.maxLength(200)]],
  });
  /** Whether the study is being created. */
  protected readonly saving = signal(false);
  protected readonly problem = signal('');

  protected fieldError(control: AbstractControl, label: string): string {
    return fieldErrorText(control.errors, label);
  }

  protected create(): void {
    this.form.markAllAsTouched();
    if (this.form.invalid) {
      this.problem.set('Some fields need attention; each says what is wrong.');
      return;
    }
    const value = this.form.getRawValue();
    this.problem.set('');
    this.saving.set(true);
    this.api
      .createStudy({ code: value.code.trim(), title: value.title.trim(), sponsor: value.sponsor.trim(), indication: value.indication.trim() })
      .pipe(
        finalize(() => this.saving.set(false)),
        takeUntilDestroyed(this.destroyRef),
      )
      .subscribe({
        next: (study) => this.dialogRef.close(study),
        error: (error: unknown) => {
          // ApiError: a code already in use, or a field the server refused; its words are shown.
          if (!(error instanceof ApiError)) throw error;
          showServerFieldErrors(this.form, error);
          this.problem.set(error.message);
        },
      });
  }
}
