import { ChangeDetectionStrategy, Component, computed, inject, input, signal } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatButtonToggle, MatButtonToggleGroup } from '@angular/material/button-toggle';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatTableModule } from '@angular/material/table';
import { RouterLink } from '@angular/router';

import type { RuleSetRule, RuleStatus } from '@shared/contracts/protocols';
import { ApiError } from '../../../core/http/api-error';
import { SetupProtocolsApi } from '../../setup-protocols-api';
import { RULE_STATUS_LABELS, ruleSetRef, ruleValueText } from '../rule-set-labels';
import { COMPARE_LINK, RULE_SETS_URL } from '../rule-set-links';
import { RuleStatusChip } from '../rule-status-chip/rule-status-chip';

/** One rule-set version: every rule with its value, source and how well it is founded. */
@Component({
  selector: 'app-rule-set-view',
  imports: [MatTableModule, MatButton, MatButtonToggleGroup, MatButtonToggle, MatIcon, MatProgressBar, RouterLink, RuleStatusChip],
  templateUrl: './rule-set-view.html',
  styleUrl: './rule-set-view.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class RuleSetViewPage {
  /** From the route `rule-sets/:id/versions/:version`. */
  readonly id = input.required<string>();
  readonly version = input.required<string>();

  private readonly versionNumber = computed(() => {
    const number = Number(this.version());
    return Number.isInteger(number) && number > 0 ? number : undefined;
  });
  protected readonly ruleSet = inject(SetupProtocolsApi).ruleSet(
    () => this.id(),
    () => this.versionNumber(),
  );
  protected readonly detail = computed(() => (this.ruleSet.hasValue() ? this.ruleSet.value() : undefined));
  protected readonly ref = computed(() => ruleSetRef({ id: this.id(), version: this.versionNumber() ?? null }));

  protected readonly columns = ['rule', 'value', 'source', 'status'] as const;
  protected readonly statuses = Object.entries(RULE_STATUS_LABELS).map(([status, label]) => ({ status: status as RuleStatus, label }));
  /** Which statuses to show; all of them until the admin narrows the list. */
  protected readonly statusFilter = signal<RuleStatus | 'all'>('all');
  protected readonly rules = computed<readonly RuleSetRule[]>(() => {
    const rules = this.detail()?.rules ?? [];
    const wanted = this.statusFilter();
    return wanted === 'all' ? rules : rules.filter((rule) => rule.status === wanted);
  });
  protected readonly countByStatus = computed(() => {
    const counts: Record<RuleStatus, number> = { verified: 0, 'from-memory': 0, 'common-practice': 0 };
    for (const rule of this.detail()?.rules ?? []) counts[rule.status]++;
    return counts;
  });
  protected readonly loadError = computed(() => {
    if (this.versionNumber() === undefined) return `"${this.version()}" is not a version number.`;
    const error = this.ruleSet.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'The rule set could not be read. Reload the page to try again.';
  });
  protected readonly valueText = ruleValueText;
  protected readonly listLink = RULE_SETS_URL;
  protected readonly compareLink = COMPARE_LINK;

  protected showStatus(status: RuleStatus | 'all'): void {
    this.statusFilter.set(status);
  }
}
