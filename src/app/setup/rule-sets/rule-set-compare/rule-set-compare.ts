import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatFormField, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatOption, MatSelect } from '@angular/material/select';
import { MatTableModule } from '@angular/material/table';
import { Router, RouterLink } from '@angular/router';

import type { RuleField, RuleSetRule } from '@shared/contracts/protocols';
import { ApiError } from '../../../core/http/api-error';
import { SetupProtocolsApi } from '../../setup-protocols-api';
import { isUsable, ruleSetRef, ruleValueText } from '../rule-set-labels';
import { RULE_SETS_URL } from '../rule-set-links';
import { RuleStatusChip } from '../rule-status-chip/rule-status-chip';

/** One line of the difference table. */
interface DifferenceRow {
  readonly kind: 'added' | 'removed' | 'changed';
  readonly ruleId: string;
  readonly before: RuleSetRule | null;
  readonly after: RuleSetRule | null;
  readonly changedFields: readonly RuleField[];
}

const KIND_LABELS: Readonly<Record<DifferenceRow['kind'], { label: string; icon: string }>> = {
  added: { label: 'Added', icon: 'add_circle' },
  removed: { label: 'Removed', icon: 'remove_circle' },
  changed: { label: 'Changed', icon: 'edit' },
};

/**
 * Two rule-set versions side by side, rule by rule. The choice lives in the URL (`?from=&to=`),
 * so a comparison can be sent to a colleague as a link.
 */
@Component({
  selector: 'app-rule-set-compare',
  imports: [MatTableModule, MatFormField, MatLabel, MatSelect, MatOption, MatIcon, MatProgressBar, RouterLink, RuleStatusChip],
  templateUrl: './rule-set-compare.html',
  styleUrl: './rule-set-compare.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class RuleSetComparePage {
  private readonly api = inject(SetupProtocolsApi);
  private readonly router = inject(Router);

  /** Query parameters: `<id>@<version>` each. */
  readonly from = input<string>();
  readonly to = input<string>();

  protected readonly catalogue = this.api.ruleSets();
  protected readonly choices = computed(() =>
    (this.catalogue.hasValue() ? this.catalogue.value() : []).filter(isUsable).map((entry) => ({ ref: ruleSetRef(entry), title: entry.title })),
  );
  /** The chosen versions, or the first two of the catalogue until the admin chooses. */
  protected readonly fromRef = computed(() => this.from() ?? this.choices()[0]?.ref);
  protected readonly toRef = computed(() => this.to() ?? this.choices().find((choice) => choice.ref !== this.fromRef())?.ref);

  protected readonly comparison = this.api.comparison(
    () => this.fromRef(),
    () => this.toRef(),
  );
  protected readonly result = computed(() => (this.comparison.hasValue() ? this.comparison.value() : undefined));
  protected readonly rows = computed<readonly DifferenceRow[]>(() => {
    const result = this.result();
    if (!result) return [];
    return [
      ...result.changed.map((change) => ({ kind: 'changed' as const, ruleId: change.ruleId, before: change.from, after: change.to, changedFields: change.changedFields })),
      ...result.added.map((rule) => ({ kind: 'added' as const, ruleId: rule.id, before: null, after: rule, changedFields: [] })),
      ...result.removed.map((rule) => ({ kind: 'removed' as const, ruleId: rule.id, before: rule, after: null, changedFields: [] })),
    ];
  });
  protected readonly loadError = computed(() => {
    const error = this.comparison.error() ?? this.catalogue.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'The comparison could not be made. Reload the page to try again.';
  });

  protected readonly columns = ['kind', 'rule', 'value', 'source', 'status'] as const;
  protected readonly valueText = ruleValueText;
  protected readonly listLink = RULE_SETS_URL;

  protected choose(side: 'from' | 'to', ref: string): void {
    const queryParams = { from: this.fromRef(), to: this.toRef(), [side]: ref };
    void this.router.navigate([RULE_SETS_URL, 'compare'], { queryParams, replaceUrl: true });
  }

  protected swap(): void {
    void this.router.navigate([RULE_SETS_URL, 'compare'], { queryParams: { from: this.toRef(), to: this.fromRef() }, replaceUrl: true });
  }

  protected kindLabel(row: DifferenceRow): { label: string; icon: string } {
    return KIND_LABELS[row.kind];
  }

  /** Whether a field of a changed rule differs, to show it as "old → new". */
  protected differs(row: DifferenceRow, field: RuleField): boolean {
    return row.changedFields.includes(field);
  }

  /** The rule as it stands in the newer side (the only side for added and removed rules). */
  protected shown(row: DifferenceRow): RuleSetRule {
    return (row.after ?? row.before)!;
  }
}
