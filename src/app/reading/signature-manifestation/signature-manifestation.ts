import { ChangeDetectionStrategy, Component, input } from '@angular/core';
import { MatIcon } from '@angular/material/icon';

import type { SignatureManifestation } from '@shared/contracts/reading';
import { SIGNATURE_MEANING_LABELS, utcSecondsText } from '../read-labels';

/**
 * A signature as shown with the signed read (21 CFR 11.50): printed name, meaning and UTC time,
 * and whether the read still matches what was signed.
 */
@Component({
  selector: 'app-signature-manifestation',
  imports: [MatIcon],
  template: `
    @let manifest = signature();
    <mat-icon aria-hidden="true">{{ manifest.valid ? 'verified' : 'gpp_bad' }}</mat-icon>
    <div>
      <p class="line">
        Signed by <strong data-testid="signed-by">{{ manifest.printedName }}</strong> · meaning:
        {{ meaningLabels[manifest.meaning] }} · {{ utcSecondsText(manifest.signedAt) }}
      </p>
      @if (manifest.valid) {
        <p class="state">Valid: the read is unchanged since it was signed.</p>
      } @else {
        <p class="state" role="alert">Not valid: the read changed after it was signed.</p>
      }
    </div>
  `,
  styles: `
    :host {
      display: flex;
      gap: 0.5rem;
      align-items: flex-start;
      padding: 0.75rem 1rem;
      border-radius: var(--mat-sys-corner-medium);
      background: var(--mat-sys-primary-container);
      color: var(--mat-sys-on-primary-container);
    }
    :host(.invalid) {
      background: var(--mat-sys-error-container);
      color: var(--mat-sys-on-error-container);
    }
    p {
      margin: 0;
    }
    .state {
      font: var(--mat-sys-body-small);
    }
  `,
  host: { '[class.invalid]': '!signature().valid' },
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SignatureManifestationView {
  readonly signature = input.required<SignatureManifestation>();
  protected readonly meaningLabels = SIGNATURE_MEANING_LABELS;
  protected readonly utcSecondsText = utcSecondsText;
}
