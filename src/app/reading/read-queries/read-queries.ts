import { ChangeDetectionStrategy, Component, DestroyRef, booleanAttribute, computed, inject, input, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatDialog } from '@angular/material/dialog';
import { MatIcon } from '@angular/material/icon';

import { ApiError } from '../../core/http/api-error';
import { ReadingApi } from '../reading-api';
import { utcText } from '../read-labels';
import { OpenQueryDialog, type QueryDraft } from './open-query-dialog';

const QUERY_STATUS_LABELS = { open: 'Open', answered: 'Answered', closed: 'Closed' } as const;

/** The queries opened on this read, with their messages, and the way to open another. */
@Component({
  selector: 'app-read-queries',
  imports: [MatButton, MatIcon],
  templateUrl: './read-queries.html',
  styleUrl: './read-queries.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReadQueries {
  private readonly api = inject(ReadingApi);
  private readonly dialog = inject(MatDialog);
  private readonly destroyRef = inject(DestroyRef);

  readonly studyId = input.required<string>();
  readonly readId = input.required<string>();
  /** Whether the reader may open a query now. */
  readonly canOpen = input(true, { transform: booleanAttribute });

  protected readonly queries = this.api.queries(
    () => this.studyId(),
    () => this.readId(),
  );
  protected readonly list = computed(() => (this.queries.hasValue() ? this.queries.value() : []));
  protected readonly statusLabels = QUERY_STATUS_LABELS;
  protected readonly utcText = utcText;
  protected readonly sending = signal(false);
  protected readonly message = signal<{ readonly text: string; readonly problem: boolean } | null>(null);

  protected openQuery(): void {
    this.dialog
      .open<OpenQueryDialog, void, QueryDraft>(OpenQueryDialog, { width: '36rem' })
      .afterClosed()
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe((draft) => {
        if (draft) this.send(draft);
      });
  }

  private send(draft: QueryDraft): void {
    this.sending.set(true);
    this.api
      .openQuery(this.studyId(), this.readId(), draft)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: () => {
          this.sending.set(false);
          this.message.set({ text: 'Query sent. The site is told by e-mail and in the site desk.', problem: false });
          this.queries.reload();
        },
        error: (error: unknown) => {
          this.sending.set(false);
          if (!(error instanceof ApiError)) throw error;
          this.message.set({ text: error.message, problem: true });
        },
      });
  }
}
