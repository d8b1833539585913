import { ChangeDetectionStrategy, Component, DestroyRef, computed, inject, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { Router, RouterLink } from '@angular/router';

import type { QueueItem } from '@shared/contracts/reading';
import { AuthSession } from '../../core/auth/auth-session';
import { ApiError } from '../../core/http/api-error';
import { CautionNote } from '../../ui/caution-note/caution-note';
import { QueueTable } from '../../reading/queue-table/queue-table';
import { utcText } from '../../reading/read-labels';
import { ReadingApi, type MyRead } from '../../reading/reading-api';
import { StudyChoice } from '../../reading/study-choice/study-choice';
import { AdjudicationApi } from '../adjudication-api';

/**
 * Home of adjudication: sessions whose two independent reads disagree, in the chosen study, and
 * the adjudicator's own adjudication reads.
 */
@Component({
  selector: 'app-adjudication-home',
  imports: [MatButton, MatIcon, MatProgressBar, RouterLink, CautionNote, QueueTable, StudyChoice],
  templateUrl: './adjudication-home.html',
  styleUrl: './adjudication-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class AdjudicationHome {
  private readonly session = inject(AuthSession);
  private readonly api = inject(AdjudicationApi);
  private readonly router = inject(Router);
  private readonly destroyRef = inject(DestroyRef);

  protected readonly studies = computed(() => this.session.assignmentsFor('adjudicator'));
  private readonly chosenStudyId = signal<string | null>(null);
  protected readonly studyId = computed(() => {
    const studies = this.studies();
    return (studies.find((study) => study.studyId === this.chosenStudyId()) ?? studies[0])?.studyId;
  });

  protected readonly queue = this.api.queue(() => this.studyId());
  protected readonly queueItems = computed(() => (this.queue.hasValue() ? this.queue.value().items : []));
  private readonly reads = inject(ReadingApi).myReads(() => this.studyId());
  private readonly adjudications = computed(() => (this.reads.hasValue() ? this.reads.value() : []).filter((read) => read.kind === 'adjudication'));
  protected readonly inProgress = computed(() => this.adjudications().filter((read) => read.status === 'in-progress'));
  protected readonly signed = computed(() =>
    this.adjudications()
      .filter((read) => read.status === 'signed')
      .sort((a, b) => (b.signedAt ?? '').localeCompare(a.signedAt ?? ''))
      .slice(0, 10),
  );

  protected readonly claimingToken = signal<string | null>(null);
  protected readonly claimProblem = signal<string | null>(null);
  protected readonly utcText = utcText;

  protected chooseStudy(studyId: string): void {
    this.chosenStudyId.set(studyId);
    this.claimProblem.set(null);
  }

  protected claimNext(): void {
    const next = this.queueItems()[0];
    if (next) this.claim(next);
  }

  protected claim(item: QueueItem): void {
    const studyId = this.studyId();
    if (!studyId || this.claimingToken()) return;
    this.claimingToken.set(item.queueToken);
    this.claimProblem.set(null);
    this.api
      .claim(studyId, item.queueToken)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (view) => {
          this.claimingToken.set(null);
          void this.router.navigate(['/adjudication/adjudications', studyId, view.workspace.readId]);
        },
        error: (error: unknown) => {
          this.claimingToken.set(null);
          // 409: another adjudicator claimed it first; the queue is shown again as it is now.
          if (!(error instanceof ApiError)) throw error;
          this.claimProblem.set(error.message);
          this.queue.reload();
        },
      });
  }

  protected readLink(read: MyRead): string[] {
    return ['/adjudication/adjudications', this.studyId() ?? '', read.readId];
  }
}
