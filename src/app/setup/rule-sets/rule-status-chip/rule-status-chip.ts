import { ChangeDetectionStrategy, Component, computed, input } from '@angular/core';
import { MatChip, MatChipAvatar } from '@angular/material/chips';
import { MatIcon } from '@angular/material/icon';

import type { RuleStatus } from '@shared/contracts/protocols';
import { RULE_STATUS_LABELS } from '../rule-set-labels';

/**
 * A rule's status as a chip: the words, an icon beside them, and a tint that only repeats them.
 * "From memory" stands out (warning icon, tertiary tint): those values are the first to check.
 */
@Component({
  selector: 'app-rule-status-chip',
  imports: [MatChip, MatChipAvatar, MatIcon],
  template: `
    <mat-chip disableRipple [attr.title]="label().description">
      <mat-icon matChipAvatar aria-hidden="true">{{ label().icon }}</mat-icon>
      {{ label().label }}
    </mat-chip>
  `,
  styles: `
    :host {
      display: inline-block;
      --mat-chip-outline-color: transparent;
      --mat-chip-label-text-color: var(--status-on);
      --mat-chip-with-avatar-avatar-color: var(--status-on);
      --mat-chip-elevated-container-color: var(--status-container);
    }
    :host(.status-verified) {
      --status-container: var(--mat-sys-primary-container);
      --status-on: var(--mat-sys-on-primary-container);
    }
    :host(.status-from-memory) {
      --status-container: var(--mat-sys-tertiary-container);
      --status-on: var(--mat-sys-on-tertiary-container);
      font-weight: 600;
    }
    :host(.status-common-practice) {
      --status-container: var(--mat-sys-surface-container-high);
      --status-on: var(--mat-sys-on-surface-variant);
    }
  `,
  host: { '[class]': '"status-" + status()' },
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class RuleStatusChip {
  readonly status = input.required<RuleStatus>();
  protected readonly label = computed(() => RULE_STATUS_LABELS[this.status()]);
}
