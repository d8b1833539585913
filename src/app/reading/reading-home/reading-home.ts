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
import { QueueTable } from '../queue-table/queue-table';
import { READ_KIND_LABELS, utcText } from '../read-labels';
import { ReadingApi, type MyRead } from '../reading-api';
import { StudyChoice } from '../study-choice/study-choice';

/** How many signed reads the home page lists. */
const RECENT_SIGNED_COUNT = 10;

/**
 * Home of the reading room: the blinded queue of the chosen study (claim the next session or a
 * particular one), the reader's reads in progress and those recently signed.
 */
@Component({
  selector: 'app-reading-home',
  imports: [MatButton, MatIcon, MatProgressBar, RouterLink, CautionNote, QueueTable, StudyChoice],
  templateUrl: './reading-home.html',
  styleUrl: './reading-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReadingHome {
  private readonly session = inject(AuthSession);
  private readonly api = inject(ReadingApi);
  private readonly router = inject(Router);
  private readonly destroyRef = inject(DestroyRef);

  protected readonly studies = computed(() => this.session.assignmentsFor('over-reader'));
  private readonly chosenStudyId = signal<string | null>(null);
  protected readonly studyId = computed(() => {
    const studies = this.studies();
    return (studies.find((study) => study.studyId === this.chosenStudyId()) ?? studies[0])?.studyId;
  });

  protected readonly queue = this.api.queue(() => this.studyId());
  protected readonly queueItems = computed(() => (this.queue.hasValue() ? this.queue.value().items : []));
  private readonly reads = this.api.myReads(() => this.studyId());
  /** Own first and second reads; adjudication reads live in the adjudication area. */
  private readonly ownReads = computed(() => (this.reads.hasValue() ? this.reads.value() : []).filter((read) => read.kind !== 'adjudication'));
  protected readonly inProgress = computed(() => this.ownReads().filter((read) => read.status === 'in-progress'));
  protected readonly recentlySigned = computed(() =>
    this.ownReads()
      .filter((read) => read.status === 'signed')
      .sort((a, b) => (b.signedAt ?? '').localeCompare(a.signedAt ?? ''))
      .slice(0, RECENT_SIGNED_COUNT),
  );

  protected readonly claimingToken = signal<string | null>(null);
  protected readonly claimProblem = signal<string | null>(null);
  protected readonly kindLabels = READ_KIND_LABELS;
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
        next: (workspace) => {
          this.claimingToken.set(null);
          void this.router.navigate(['/reading/reads', studyId, workspace.readId]);
        },
        error: (error: unknown) => {
          this.claimingToken.set(null);
          // 409: another reader claimed it first; the queue is shown again as it is now.
          if (!(error instanceof ApiError)) throw error;
          this.claimProblem.set(error.message);
          this.queue.reload();
        },
      });
  }

  protected readLink(read: MyRead): string[] {
    return ['/reading/reads', this.studyId() ?? '', read.readId];
  }
}
