import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  booleanAttribute,
  computed,
  inject,
  input,
  signal,
} from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatProgressBar } from '@angular/material/progress-bar';

import type { Query } from '@shared/contracts/reading';
import { ApiError } from '../../core/http/api-error';
import { SiteDeskApi } from '../site-desk-api';
import { ZonedTimePipe } from '../zoned-time-pipe';

/** Where a query stands, in the site's words. */
export const QUERY_STATUS_LABELS: Readonly<Record<Query['status'], { readonly label: string; readonly icon: string }>> = {
  open: { label: 'Waiting for your answer', icon: 'help' },
  answered: { label: 'Answered; with the study team', icon: 'mark_chat_read' },
  closed: { label: 'Closed', icon: 'check_circle' },
};

/** The server's minimum length of an answer (shared/contracts/reading.ts). */
const MIN_ANSWER_LENGTH = 2;

/**
 * The queries of the over-reader and the data manager on one session, each with its thread, a
 * clear "repeat the test requested" note where asked, and a form to answer it.
 */
@Component({
  selector: 'app-session-queries',
  imports: [MatButton, MatFormField, MatHint, MatIcon, MatInput, MatLabel, MatProgressBar, ZonedTimePipe],
  templateUrl: './session-queries.html',
  styleUrl: './session-queries.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SessionQueries {
  private readonly api = inject(SiteDeskApi);
  private readonly destroyRef = inject(DestroyRef);

  readonly studyId = input.required<string>();
  readonly sessionId = input.required<string>();
  /** The site's zone, for the times of the thread. */
  readonly timeZone = input.required<string>();
  /** Whether the session's data is locked: nothing can be answered then. */
  readonly locked = input(false, { transform: booleanAttribute });

  protected readonly resource = this.api.sessionQueries(
    () => this.studyId(),
    () => this.sessionId(),
  );
  protected readonly queries = computed<Query[] | undefined>(() => (this.resource.hasValue() ? this.resource.value() : undefined));
  protected readonly loadError = computed(() => {
    const error = this.resource.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'The queries could not be read. Reload the page to try again.';
  });

  /** Answers being written, per query. */
  protected readonly drafts = signal<Readonly<Record<string, string>>>({});
  /** Why the last answer to a query was refused, per query. */
  protected readonly problems = signal<Readonly<Record<string, string>>>({});
  protected readonly sendingId = signal<string | null>(null);

  protected readonly statusLabels = QUERY_STATUS_LABELS;
  protected readonly minAnswerLength = MIN_ANSWER_LENGTH;

  protected draftOf(queryId: string): string {
    return this.drafts()[queryId] ?? '';
  }

  protected setDraft(queryId: string, text: string): void {
    this.drafts.update((drafts) => ({ ...drafts, [queryId]: text }));
  }

  /** Whether the answer to a query is long enough to send and nothing is on its way. */
  protected canSend(queryId: string): boolean {
    return this.sendingId() === null && this.draftOf(queryId).trim().length >= MIN_ANSWER_LENGTH;
  }

  protected sendAnswer(query: Query): void {
    if (!this.canSend(query.id)) return;
    this.sendingId.set(query.id);
    this.problems.update((problems) => ({ ...problems, [query.id]: '' }));
    this.api
      .answerQuery(this.studyId(), query.id, this.draftOf(query.id).trim())
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (answered) => {
          this.sendingId.set(null);
          this.setDraft(query.id, '');
          this.resource.update((list) => list?.map((candidate) => (candidate.id === answered.id ? answered : candidate)));
        },
        error: (error: unknown) => {
          this.sendingId.set(null);
          // Expected refusals (locked, closed meanwhile) are explained; anything else is unexpected.
          if (!(error instanceof ApiError)) throw error;
          this.problems.update((problems) => ({ ...problems, [query.id]: error.message }));
          this.resource.reload();
        },
      });
  }
}
