import { ChangeDetectionStrategy, Component, DestroyRef, ErrorHandler, computed, inject, output, signal } from '@angular/core';
import { takeUntilDestroyed, toSignal } from '@angular/core/rxjs-interop';
import { NonNullableFormBuilder, ReactiveFormsModule, Validators } from '@angular/forms';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatOption, MatSelect } from '@angular/material/select';

import {
  EQUATIONS_FILE_LAYOUTS,
  EQUATIONS_NAMES,
  importableEquationsIdSchema,
  type ImportableEquationsId,
  type ReferenceSet,
} from '@shared/contracts/reference-sets';
import { ApiError } from '../../../core/http/api-error';
import { SetupReferenceSetsApi, referenceSetRefusalOf } from '../../setup-reference-sets-api';
import { fileSizeText } from '../reference-set-labels';

/** Where one import stands, from choosing the file to the server's verdict. */
type ImportState =
  | { readonly phase: 'idle' }
  | { readonly phase: 'sending' }
  | { readonly phase: 'imported'; readonly set: ReferenceSet }
  | { readonly phase: 'refused'; readonly message: string; readonly problems: readonly string[] }
  | { readonly phase: 'failed'; readonly message: string };

/**
 * Sends the publisher's file for one set of equations, then says what became of it: imported
 * with its checks, or refused with every problem the server found (nothing is kept then).
 */
@Component({
  selector: 'app-reference-set-import',
  imports: [ReactiveFormsModule, MatButton, MatIcon, MatFormField, MatLabel, MatHint, MatInput, MatSelect, MatOption, MatProgressBar],
  templateUrl: './reference-set-import.html',
  styleUrl: './reference-set-import.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReferenceSetImport {
  private readonly api = inject(SetupReferenceSetsApi);
  private readonly errorHandler = inject(ErrorHandler);
  private readonly destroyRef = inject(DestroyRef);

  /** A set was imported (201). */
  readonly imported = output<ReferenceSet>();

  protected readonly equationsOptions = importableEquationsIdSchema.options.map((id) => ({ id, name: EQUATIONS_NAMES[id] }));
  protected readonly form = inject(NonNullableFormBuilder).group({
    equationsId: ['gli-global-2022' as ImportableEquationsId, Validators.required],
    label: ['', Validators.maxLength(200)],
  });
  private readonly equationsId = toSignal(this.form.controls.equationsId.valueChanges, { initialValue: this.form.controls.equationsId.value });
  protected readonly layout = computed(() => EQUATIONS_FILE_LAYOUTS[this.equationsId()]);
  protected readonly accept = computed(() => (this.equationsId() === 'gli-global-2022' ? '.xlsx' : '.zip'));

  protected readonly file = signal<File | null>(null);
  protected readonly fileSize = computed(() => {
    const file = this.file();
    return file ? fileSizeText(file.size) : '';
  });
  protected readonly state = signal<ImportState>({ phase: 'idle' });
  /** Whether a file is on its way or being checked. */
  protected readonly busy = computed(() => this.state().phase === 'sending');

  protected chooseFile(event: Event): void {
    this.file.set((event.target as HTMLInputElement).files?.item(0) ?? null);
    this.state.set({ phase: 'idle' });
  }

  protected importFile(): void {
    const file = this.file();
    if (!file || this.busy() || this.form.invalid) return;
    const { equationsId, label } = this.form.getRawValue();
    this.state.set({ phase: 'sending' });
    this.api
      .importReferenceSet(file, equationsId, label)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (set) => {
          this.state.set({ phase: 'imported', set });
          this.form.controls.label.reset('');
          this.imported.emit(set);
        },
        error: (error: unknown) => this.showFailure(error),
      });
  }

  private showFailure(error: unknown): void {
    const refusal = referenceSetRefusalOf(error);
    if (refusal) {
      this.state.set({ phase: 'refused', message: (error as ApiError).message, problems: refusal.problems });
      return;
    }
    if (error instanceof ApiError) {
      this.state.set({ phase: 'failed', message: error.message });
      return;
    }
    this.state.set({ phase: 'failed', message: 'Something unexpected went wrong. Try again.' });
    this.errorHandler.handleError(error);
  }
}
