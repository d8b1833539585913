import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  computed,
  inject,
  input,
  signal,
} from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatButtonToggle, MatButtonToggleGroup } from '@angular/material/button-toggle';
import { MatFormField, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatOption, MatSelect } from '@angular/material/select';
import type { Observable } from 'rxjs';

import type { Query } from '@shared/contracts/reading';
import { ApiError } from '../../core/http/api-error';
import { DataManagerStudies } from '../data-manager-studies';
import { DataOfficeApi, type QueryStatusFilter } from '../data-office-api';
import { OpenQuery } from '../open-query/open-query';

/** Where a query stands, in the data office's words. */
export const QUERY_STATUS_LABELS: Readonly<Record<Query['status'], { readonly label: string; readonly icon: string }>> = {
  open: { label: 'Open: waiting for the site', icon: 'help' },
  answered: { label: 'Answered: close it or write again', icon: 'mark_chat_read' },
  closed: { label: 'Closed', icon: 'check_circle' },
};

/** The server's minimum length of a message (shared/contracts/reading.ts). */
const MIN_MESSAGE_LENGTH = 2;

/**
 * The data manager's queries page: every query of the study by status, each thread with a way to
 * write again (which reopens it) or close it, and a form to open a query on a session.
 */
@Component({
  selector: 'app-query-list',
  imports: [
    MatButton,
    MatButtonToggle,
    MatButtonToggleGroup,
    MatFormField,
    MatIcon,
    MatInput,
    MatLabel,
    MatOption,
    MatProgressBar,
    MatSelect,
    OpenQuery,
  ],
  templateUrl: './query-list.html',
  styleUrl: './query-list.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class QueryListPage {
  private readonly api = inject(DataOfficeApi);
  private readonly destroyRef = inject(DestroyRef);

  /** From the route's `?subjectCode=`: prefills the form that opens a query. */
  readonly subjectCode = input<string | undefined>(undefined);

  private readonly dataManagerStudies = new DataManagerStudies();
  protected readonly studies = this.dataManagerStudies.all;
  protected readonly study = this.dataManagerStudies.current;
  protected readonly studyId = this.dataManagerStudies.currentId;

  protected readonly status = signal<QueryStatusFilter>('all');
  protected readonly queries = this.api.queriesOf(
    () => this.studyId(),
    () => this.status(),
  );
  protected readonly list = computed<Query[] | undefined>(() => (this.queries.hasValue() ? this.queries.value() : undefined));
  protected readonly loadError = computed(() => {
    const error = this.queries.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'The queries could not be read. Reload the page to try again.';
  });

  protected readonly drafts = signal<Readonly<Record<string, string>>>({});
  protected readonly problems = signal<Readonly<Record<string, string>>>({});
  protected readonly busyId = signal<string | null>(null);
  protected readonly statusLabels = QUERY_STATUS_LABELS;

  protected chooseStudy(studyId: string): void {
    this.dataManagerStudies.choose(studyId);
  }

  protected draftOf(queryId: string): string {
    return this.drafts()[queryId] ?? '';
  }

  protected setDraft(queryId: string, text: string): void {
    this.drafts.update((drafts) => ({ ...drafts, [queryId]: text }));
  }

  protected canWrite(queryId: string): boolean {
    return this.busyId() === null && this.draftOf(queryId).trim().length >= MIN_MESSAGE_LENGTH;
  }

  protected showOpened(): void {
    this.queries.reload();
  }

  protected writeAgain(query: Query): void {
    if (!this.canWrite(query.id)) return;
    this.act(query, this.api.followUp(this.studyId()!, query.id, this.draftOf(query.id).trim()), () => this.setDraft(query.id, ''));
  }

  protected close(query: Query): void {
    if (this.busyId() !== null) return;
    this.act(query, this.api.closeQuery(this.studyId()!, query.id));
  }

  private act(query: Query, request: Observable<Query>, done?: () => void): void {
    this.busyId.set(query.id);
    this.problems.update((problems) => ({ ...problems, [query.id]: '' }));
    request.pipe(takeUntilDestroyed(this.destroyRef)).subscribe({
      next: (changed) => {
        this.busyId.set(null);
        done?.();
        this.queries.update((list) => list?.map((candidate) => (candidate.id === changed.id ? changed : candidate)));
      },
      error: (error: unknown) => {
        this.busyId.set(null);
        // Expected refusals (locked data, closed meanwhile) are explained; anything else is unexpected.
        if (!(error instanceof ApiError)) throw error;
        this.problems.update((problems) => ({ ...problems, [query.id]: error.message }));
      },
    });
  }
}
