import { ChangeDetectionStrategy, Component, DestroyRef, ErrorHandler, computed, effect, inject, input, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatOption, MatSelect } from '@angular/material/select';

import { EQUATIONS_SHORT_NAMES, type ReferenceSet } from '@shared/contracts/reference-sets';
import { ApiError } from '../../../core/http/api-error';
import { SetupReferenceSetsApi } from '../../setup-reference-sets-api';

/** The select value for "no imported set". */
const BUILT_IN = '';
/** Shortest reason the server accepts. */
const MIN_REASON_LENGTH = 3;

type SaveState =
  | { readonly phase: 'idle' | 'saving' | 'saved' }
  | { readonly phase: 'failed'; readonly message: string };

/**
 * Which reference set one study pins, and the control to change it. Once the study has sessions
 * the change needs a reason, asked for here before anything is sent.
 */
@Component({
  selector: 'app-study-reference-set',
  imports: [MatButton, MatIcon, MatFormField, MatLabel, MatHint, MatInput, MatSelect, MatOption],
  templateUrl: './study-reference-set.html',
  styleUrl: './study-reference-set.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class StudyReferenceSetPin {
  private readonly api = inject(SetupReferenceSetsApi);
  private readonly errorHandler = inject(ErrorHandler);
  private readonly destroyRef = inject(DestroyRef);

  readonly studyId = input.required<string>();
  readonly studyCode = input.required<string>();
  /** Every imported set the study may pin. */
  readonly referenceSets = input.required<readonly ReferenceSet[]>();

  protected readonly builtIn = BUILT_IN;
  protected readonly shortNames = EQUATIONS_SHORT_NAMES;
  protected readonly current = this.api.studyReferenceSet(() => this.studyId());
  protected readonly pinned = computed(() => (this.current.hasValue() ? this.current.value() : undefined));
  protected readonly pinnedSet = computed(() => this.referenceSets().find((set) => set.id === this.pinned()?.referenceSetId));
  /** Whether the study names equations that need tables no set provides. */
  protected readonly tablesMissing = computed(() => {
    const pinned = this.pinned();
    return !!pinned && pinned.referenceSetId === null && pinned.equationsId !== 'ecsc-1993';
  });

  protected readonly choice = signal(BUILT_IN);
  protected readonly reason = signal('');
  protected readonly state = signal<SaveState>({ phase: 'idle' });
  /** Whether the chosen set differs from the pinned one. */
  protected readonly changed = computed(() => {
    const pinned = this.pinned();
    return !!pinned && this.choice() !== (pinned.referenceSetId ?? BUILT_IN);
  });
  /** Whether the server will want a reason for this change. */
  protected readonly needsReason = computed(() => this.changed() && !!this.pinned()?.reasonRequired);
  protected readonly canSave = computed(
    () => this.changed() && this.state().phase !== 'saving' && (!this.needsReason() || this.reason().trim().length >= MIN_REASON_LENGTH),
  );

  constructor() {
    // The select starts at what the study pins, and follows it after a save.
    effect(() => this.choice.set(this.pinned()?.referenceSetId ?? BUILT_IN));
  }

  protected choose(value: string): void {
    this.choice.set(value);
    this.state.set({ phase: 'idle' });
  }

  protected readReason(event: Event): void {
    this.reason.set((event.target as HTMLTextAreaElement).value);
  }

  protected save(): void {
    if (!this.canSave()) return;
    const choice = this.choice();
    this.state.set({ phase: 'saving' });
    this.api
      .pin(this.studyId(), choice === BUILT_IN ? null : choice, this.needsReason() ? this.reason().trim() : undefined)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (pinned) => {
          this.current.set(pinned);
          this.reason.set('');
          this.state.set({ phase: 'saved' });
        },
        error: (error: unknown) => {
          if (error instanceof ApiError) {
            this.state.set({ phase: 'failed', message: error.message });
            return;
          }
          this.state.set({ phase: 'failed', message: 'Something unexpected went wrong. Try again.' });
          this.errorHandler.handleError(error);
        },
      });
  }
}
