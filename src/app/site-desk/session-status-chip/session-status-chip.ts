import { ChangeDetectionStrategy, Component, computed, input } from '@angular/core';
import { MatChip, MatChipAvatar } from '@angular/material/chips';
import { MatIcon } from '@angular/material/icon';

import type { SessionStatus } from '@shared/contracts/sessions';
import { sessionStatusLabel } from '../session-labels';

/** A session's status as a chip: the words, an icon beside them, and a tint that only repeats them. */
@Component({
  selector: 'app-session-status-chip',
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
    :host(.status-awaiting-file) {
      --status-container: var(--mat-sys-tertiary-container);
      --status-on: var(--mat-sys-on-tertiary-container);
    }
    :host(.status-checked) {
      --status-container: var(--mat-sys-primary-container);
      --status-on: var(--mat-sys-on-primary-container);
    }
    :host(.status-rejected) {
      --status-container: var(--mat-sys-error-container);
      --status-on: var(--mat-sys-on-error-container);
    }
  `,
  host: { '[class]': '"status-" + status()' },
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SessionStatusChip {
  readonly status = input.required<SessionStatus>();
  protected readonly label = computed(() => sessionStatusLabel(this.status()));
}
