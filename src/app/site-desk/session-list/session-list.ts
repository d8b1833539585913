import { ChangeDetectionStrategy, Component, computed, inject, input, linkedSignal, signal } from '@angular/core';
import { toObservable, toSignal } from '@angular/core/rxjs-interop';
import { MatFormField, MatLabel, MatSuffix } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatPaginator, type PageEvent } from '@angular/material/paginator';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatOption, MatSelect } from '@angular/material/select';
import { MatSort, MatSortHeader, type Sort } from '@angular/material/sort';
import { MatTableModule } from '@angular/material/table';
import { Router, RouterLink } from '@angular/router';
import { debounceTime, distinctUntilChanged, map } from 'rxjs';

import {
  sessionSortSchema,
  sessionStatusSchema,
  type SessionListQuery,
  type SessionPage,
  type SessionStatus,
  type SessionSummary,
} from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { BRONCHODILATOR_LABELS, SESSION_STATUS_LABELS } from '../session-labels';
import { SessionStatusChip } from '../session-status-chip/session-status-chip';
import { SiteDeskApi } from '../site-desk-api';
import { ZonedTimePipe } from '../zoned-time-pipe';

type SessionSort = SessionListQuery['sort'] & string;

/** How the list opens: the most recent tests first. */
const DEFAULT_SORT: { readonly active: SessionSort; readonly direction: 'asc' | 'desc' } = {
  active: 'testedAt',
  direction: 'desc',
};

/** Time the coordinator may still be typing a subject code before the list is asked again. */
const TYPING_PAUSE_MS = 300;

/**
 * The sessions of one site, filtered, sorted and paged by the server. A row opens the session.
 */
@Component({
  selector: 'app-session-list',
  imports: [
    MatTableModule,
    MatSort,
    MatSortHeader,
    MatPaginator,
    MatProgressBar,
    MatFormField,
    MatLabel,
    MatSuffix,
    MatInput,
    MatSelect,
    MatOption,
    MatIcon,
    RouterLink,
    SessionStatusChip,
    ZonedTimePipe,
  ],
  templateUrl: './session-list.html',
  styleUrl: './session-list.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SessionList {
  private readonly api = inject(SiteDeskApi);
  private readonly router = inject(Router);

  readonly studyId = input.required<string | undefined>();
  readonly siteId = input.required<string | undefined>();

  protected readonly columns = [
    'subjectCode',
    'visitCode',
    'timepointCode',
    'bronchodilator',
    'testedAt',
    'status',
    'grades',
    'effortCount',
  ] as const;
  protected readonly statusOptions = sessionStatusSchema.options.map((status) => ({
    status,
    label: SESSION_STATUS_LABELS[status].label,
  }));
  protected readonly pageSizeOptions = [10, 25, 50, 100];

  protected readonly statusFilter = signal<SessionStatus | undefined>(undefined);
  protected readonly visitFilter = signal<string | undefined>(undefined);
  protected readonly subjectInput = signal('');
  private readonly subjectFilter = toSignal(
    toObservable(this.subjectInput).pipe(
      map((text) => text.trim()),
      debounceTime(TYPING_PAUSE_MS),
      distinctUntilChanged(),
    ),
    { initialValue: '' },
  );
  protected readonly sort = signal(DEFAULT_SORT);
  protected readonly pageSize = signal(25);
  /** Back to the first page whenever the site, a filter, the sort or the page size changes. */
  protected readonly pageIndex = linkedSignal({
    source: () => [
      this.studyId(),
      this.siteId(),
      this.statusFilter(),
      this.visitFilter(),
      this.subjectFilter(),
      this.sort(),
      this.pageSize(),
    ],
    computation: () => 0,
  });

  private readonly query = computed<SessionListQuery>(() => ({
    siteId: this.siteId(),
    status: this.statusFilter(),
    subjectCode: this.subjectFilter() || undefined,
    visitCode: this.visitFilter(),
    sort: this.sort().active,
    direction: this.sort().direction,
    page: this.pageIndex(),
    pageSize: this.pageSize(),
  }));

  protected readonly schedule = this.api.scheduleOf(() => this.studyId());
  protected readonly visits = computed(() => (this.schedule.hasValue() ? this.schedule.value().visits : []));
  protected readonly sessions = this.api.sessionsOf(
    () => (this.siteId() ? this.studyId() : undefined),
    () => this.query(),
  );
  /** The last page received, kept on screen while the next one loads. */
  private readonly shownPage = linkedSignal<SessionPage | undefined, SessionPage | undefined>({
    source: () => (this.sessions.hasValue() ? this.sessions.value() : undefined),
    computation: (next, previous) => next ?? previous?.value,
  });
  protected readonly rows = computed<readonly SessionSummary[]>(() => this.shownPage()?.items ?? []);
  protected readonly total = computed(() => this.shownPage()?.total ?? 0);
  protected readonly loadError = computed(() => {
    const error = this.sessions.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'The list of sessions could not be read. Reload the page to try again.';
  });
  /** Whether any filter narrows the list. */
  protected readonly filtered = computed(() => !!(this.statusFilter() || this.visitFilter() || this.subjectFilter()));

  protected bronchodilatorText(row: SessionSummary): string {
    return BRONCHODILATOR_LABELS[row.bronchodilator];
  }

  protected visitName(code: string): string {
    return this.visits().find((visit) => visit.code === code)?.name ?? code;
  }

  protected applySort(sort: Sort): void {
    const active = sessionSortSchema.safeParse(sort.active);
    // Clearing the sort (third click) returns to the opening order rather than to none.
    this.sort.set(active.success && sort.direction ? { active: active.data, direction: sort.direction } : DEFAULT_SORT);
  }

  protected turnPage(event: PageEvent): void {
    if (event.pageSize !== this.pageSize()) {
      this.pageSize.set(event.pageSize);
      return;
    }
    this.pageIndex.set(event.pageIndex);
  }

  protected filterByStatus(status: SessionStatus | undefined): void {
    this.statusFilter.set(status || undefined);
  }

  protected filterByVisit(visitCode: string | undefined): void {
    this.visitFilter.set(visitCode || undefined);
  }

  protected filterBySubject(event: Event): void {
    this.subjectInput.set((event.target as HTMLInputElement).value);
  }

  protected sessionLink(row: SessionSummary): string[] {
    return ['/site-desk', 'sessions', row.studyId, row.id];
  }

  /** A click anywhere on a row opens it; the subject link inside serves the keyboard. */
  protected openFromRow(row: SessionSummary, event: Event): void {
    if ((event.target as HTMLElement | null)?.closest('a')) return;
    void this.router.navigate(this.sessionLink(row));
  }
}
