import { ChangeDetectionStrategy, Component, computed, input } from '@angular/core';

import { valueLines } from './value-diff';

/**
 * One side of an audited change: one line per field (`field: value`, the value as formatted JSON),
 * the fields that differ from the other side highlighted (and announced as "changed" to screen readers).
 */
@Component({
  selector: 'app-audit-value',
  template: `
    @if (lines().length === 0) {
      <span class="none">—</span>
    } @else {
      <ul class="lines">
        @for (line of lines(); track $index) {
          <li class="line" [class.changed]="line.changed">
            @if (line.field !== null) {
              <span class="field">{{ line.field }}</span>:
            }
            <span class="text">{{ line.text }}</span>
            @if (line.changed) {
              <span class="visually-hidden">(changed)</span>
            }
          </li>
        }
      </ul>
    }
  `,
  styles: `
    :host {
      display: block;
      min-width: 12rem;
    }
    .lines {
      margin: 0;
      padding: 0;
      list-style: none;
      font: 0.8125rem/1.45 ui-monospace, 'SFMono-Regular', Menlo, Consolas, monospace;
    }
    .line {
      padding: 0 0.25rem;
      border-radius: var(--mat-sys-corner-extra-small);
      overflow-wrap: anywhere;
    }
    .line.changed {
      background: var(--mat-sys-tertiary-container);
      color: var(--mat-sys-on-tertiary-container);
    }
    .field {
      font-weight: 700;
    }
    .text {
      white-space: pre-wrap;
    }
    .none {
      color: var(--mat-sys-on-surface-variant);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class AuditValue {
  /** The value shown. */
  readonly value = input.required<unknown>();
  /** The other side of the change, to mark what differs. */
  readonly other = input.required<unknown>();

  protected readonly lines = computed(() => valueLines(this.value(), this.other()));
}
