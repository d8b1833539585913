import { ChangeDetectionStrategy, Component } from '@angular/core';
import { MatIcon } from '@angular/material/icon';

/** The caution shown wherever automated results appear. */
export const CAUTION_TEXT =
  'Automated values support, and do not replace, review by qualified staff; the protocol, ' +
  'local regulations and licensed practice prevail.';

/** The caution line, placed wherever results are shown. */
@Component({
  selector: 'app-caution-note',
  imports: [MatIcon],
  template: `<mat-icon>info</mat-icon><span>{{ text }}</span>`,
  styles: `
    :host {
      display: flex;
      gap: 0.5rem;
      align-items: flex-start;
      padding: 0.75rem 1rem;
      border-radius: var(--mat-sys-corner-medium);
      background: var(--mat-sys-surface-container);
      color: var(--mat-sys-on-surface-variant);
      font: var(--mat-sys-body-medium);
    }
    mat-icon {
      flex: none;
      color: var(--mat-sys-primary);
    }
  `,
  host: { role: 'note', 'aria-label': 'Caution' },
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class CautionNote {
  protected readonly text = CAUTION_TEXT;
}
