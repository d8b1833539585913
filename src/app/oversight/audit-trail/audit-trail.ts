import { DecimalPipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, computed, inject, input, linkedSignal, signal } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatPaginator, type PageEvent } from '@angular/material/paginator';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatOption, MatSelect } from '@angular/material/select';
import { MatTableModule } from '@angular/material/table';
import { MatTooltip } from '@angular/material/tooltip';

import type { AuditEntry, AuditPage, AuditQuery, ChainVerificationResult } from '@shared/contracts/oversight';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { ApiError } from '../../core/http/api-error';
import { OversightApi } from '../oversight-api';
import { OversightTabs } from '../oversight-tabs/oversight-tabs';
import { AuditValue } from './audit-value';
import { changedFields } from './value-diff';

/** Where the on-demand chain verification stands. */
type Verification =
  | { readonly state: 'idle' }
  | { readonly state: 'running' }
  | { readonly state: 'done'; readonly result: ChainVerificationResult }
  | { readonly state: 'failed'; readonly message: string };

/**
 * The study's audit trail for the monitor: filters (site, person, entity, action, UTC days), a
 * server-paged table with old and new values side by side, and chain verification on demand.
 */
@Component({
  selector: 'app-audit-trail',
  imports: [
    DecimalPipe,
    MatButton,
    MatFormField,
    MatHint,
    MatLabel,
    MatIcon,
    MatInput,
    MatPaginator,
    MatProgressBar,
    MatSelect,
    MatOption,
    MatTableModule,
    MatTooltip,
    AuditValue,
    OversightTabs,
  ],
  templateUrl: './audit-trail.html',
  styleUrl: './audit-trail.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class AuditTrail {
  private readonly api = inject(OversightApi);

  /** From the route. */
  readonly studyId = input.required<string>();

  protected readonly columns = ['at', 'who', 'what', 'oldValue', 'newValue'] as const;
  protected readonly pageSizeOptions = [25, 50, 100, 200];

  protected readonly siteFilter = signal<string | undefined>(undefined);
  protected readonly userFilter = signal<string | undefined>(undefined);
  protected readonly entityFilter = signal<string | undefined>(undefined);
  protected readonly actionFilter = signal<string | undefined>(undefined);
  protected readonly fromDay = signal('');
  protected readonly toDay = signal('');
  protected readonly pageSize = signal(50);
  /** Back to the first page whenever the study, a filter or the page size changes. */
  protected readonly pageIndex = linkedSignal({
    source: () => [
      this.studyId(),
      this.siteFilter(),
      this.userFilter(),
      this.entityFilter(),
      this.actionFilter(),
      this.fromDay(),
      this.toDay(),
      this.pageSize(),
    ],
    computation: () => 0,
  });

  private readonly query = computed<AuditQuery>(() => ({
    siteId: this.siteFilter(),
    userId: this.userFilter(),
    entity: this.entityFilter(),
    action: this.actionFilter(),
    from: this.fromDay() || undefined,
    to: this.toDay() || undefined,
    page: this.pageIndex(),
    pageSize: this.pageSize(),
  }));

  protected readonly options = this.api.auditFilterOptions(() => this.studyId());
  protected readonly trail = this.api.auditPage(() => this.studyId(), () => this.query());
  /** The last page received, kept on screen while the next one loads. */
  private readonly shownPage = linkedSignal<AuditPage | undefined, AuditPage | undefined>({
    source: () => (this.trail.hasValue() ? this.trail.value() : undefined),
    computation: (next, previous) => next ?? previous?.value,
  });
  protected readonly rows = computed<readonly AuditEntry[]>(() => this.shownPage()?.items ?? []);
  protected readonly total = computed(() => this.shownPage()?.total ?? 0);
  protected readonly blinding = computed(() => this.shownPage()?.blinding);
  protected readonly filterOptions = computed(() => (this.options.hasValue() ? this.options.value() : undefined));
  protected readonly filtered = computed(
    () => !!(this.siteFilter() || this.userFilter() || this.entityFilter() || this.actionFilter() || this.fromDay() || this.toDay()),
  );
  protected readonly loadError = computed(() => {
    const error = this.trail.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'The audit trail could not be read. Reload the page to try again.';
  });

  protected readonly verification = signal<Verification>({ state: 'idle' });
  protected readonly verificationResult = computed(() => {
    const verification = this.verification();
    return verification.state === 'done' ? verification.result : null;
  });
  protected readonly verificationError = computed(() => {
    const verification = this.verification();
    return verification.state === 'failed' ? verification.message : null;
  });

  protected roleLabel(role: string): string {
    return role === 'system' ? 'system' : (ROLE_LABELS[role as keyof typeof ROLE_LABELS] ?? role);
  }

  protected changeSummary(row: AuditEntry): string {
    const fields = changedFields(row.oldValue, row.newValue);
    return fields.length ? `Changed: ${fields.join(', ')}` : '';
  }

  protected setDay(which: 'from' | 'to', event: Event): void {
    const value = (event.target as HTMLInputElement).value;
    (which === 'from' ? this.fromDay : this.toDay).set(value);
  }

  protected clearFilters(): void {
    this.siteFilter.set(undefined);
    this.userFilter.set(undefined);
    this.entityFilter.set(undefined);
    this.actionFilter.set(undefined);
    this.fromDay.set('');
    this.toDay.set('');
  }

  protected turnPage(event: PageEvent): void {
    if (event.pageSize !== this.pageSize()) {
      this.pageSize.set(event.pageSize);
      return;
    }
    this.pageIndex.set(event.pageIndex);
  }

  protected verifyChain(): void {
    this.verification.set({ state: 'running' });
    this.api.verifyChain(this.studyId()).subscribe({
      next: (result) => {
        this.verification.set({ state: 'done', result });
        // The verification is itself a new audit row: show it.
        this.trail.reload();
        this.options.reload();
      },
      error: (error: unknown) =>
        this.verification.set({
          state: 'failed',
          message: error instanceof ApiError ? error.message : 'The verification could not be run. Try again in a moment.',
        }),
    });
  }
}
