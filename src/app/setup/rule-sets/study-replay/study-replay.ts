import { DecimalPipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, DestroyRef, computed, inject, linkedSignal, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatOption, MatSelect } from '@angular/material/select';
import { MatTableModule } from '@angular/material/table';
import { RouterLink } from '@angular/router';

import type { ReplayResult } from '@shared/contracts/protocols';
import { AuthSession } from '../../../core/auth/auth-session';
import { ApiError } from '../../../core/http/api-error';
import { CautionNote } from '../../../ui/caution-note/caution-note';
import { SetupProtocolsApi } from '../../setup-protocols-api';
import { isUsable, ruleSetRef } from '../rule-set-labels';
import { RULE_SETS_URL } from '../rule-set-links';

/** The engine's suggested verdicts in words. */
const VERDICT_WORDS: Readonly<Record<string, string>> = {
  acceptable: 'Acceptable',
  usable: 'Usable',
  not_acceptable: 'Not acceptable',
};

/**
 * "What would change if this study used another rule set?" The server re-reads every checked
 * session's stored file and runs the checks under both rule sets; nothing in the study changes.
 */
@Component({
  selector: 'app-study-replay',
  imports: [
    DecimalPipe,
    MatTableModule,
    MatButton,
    MatFormField,
    MatLabel,
    MatHint,
    MatSelect,
    MatOption,
    MatIcon,
    MatProgressBar,
    RouterLink,
    CautionNote,
  ],
  templateUrl: './study-replay.html',
  styleUrl: './study-replay.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class StudyReplayPage {
  private readonly api = inject(SetupProtocolsApi);
  private readonly destroyRef = inject(DestroyRef);

  protected readonly studies = inject(AuthSession).assignmentsFor('study-admin');
  protected readonly studyId = linkedSignal(() => this.studies[0]?.studyId);
  protected readonly catalogue = this.api.ruleSets();
  protected readonly choices = computed(() =>
    (this.catalogue.hasValue() ? this.catalogue.value() : []).filter(isUsable).map((entry) => ({ ref: ruleSetRef(entry), title: entry.title })),
  );
  protected readonly ruleSet = signal<string | undefined>(undefined);

  /** Whether a replay is running (it takes a second or two per hundred sessions). */
  protected readonly running = signal(false);
  protected readonly result = signal<ReplayResult | null>(null);
  protected readonly problem = signal<string | null>(null);
  protected readonly csvUrl = computed(() => {
    const result = this.result();
    return result ? this.api.replayCsvUrl(result.studyId, result.id) : null;
  });
  protected readonly studyCode = computed(
    () => this.studies.find((study) => study.studyId === this.result()?.studyId)?.studyCode ?? this.result()?.studyId,
  );

  protected readonly transitionColumns = ['value', 'from', 'to', 'count'] as const;
  protected readonly effortColumns = ['where', 'effort', 'fev1', 'fvc'] as const;
  protected readonly sessionColumns = ['where', 'fev1Grade', 'fvcGrade', 'fev1Endpoint', 'fvcEndpoint'] as const;
  protected readonly verdictWords = VERDICT_WORDS;
  protected readonly listLink = RULE_SETS_URL;

  protected chooseStudy(studyId: string): void {
    this.studyId.set(studyId);
    this.result.set(null);
  }

  protected chooseRuleSet(ref: string): void {
    this.ruleSet.set(ref);
  }

  protected run(): void {
    const studyId = this.studyId();
    const ruleSet = this.ruleSet();
    if (!studyId || !ruleSet || this.running()) return;
    this.running.set(true);
    this.problem.set(null);
    this.api
      .replay(studyId, ruleSet)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (result) => {
          this.result.set(result);
          this.running.set(false);
        },
        error: (error: unknown) => {
          this.running.set(false);
          if (!(error instanceof ApiError)) throw error;
          this.problem.set(error.message);
        },
      });
  }

  /** `A → C`, or `A` alone when nothing moved; flags read Yes and No. */
  protected stepText(step: { readonly from: string | boolean; readonly to: string | boolean }): string {
    const word = (value: string | boolean) => (typeof value === 'boolean' ? (value ? 'Yes' : 'No') : value);
    return step.from === step.to ? word(step.from) : `${word(step.from)} → ${word(step.to)}`;
  }
}
