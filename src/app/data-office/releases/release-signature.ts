import { ChangeDetectionStrategy, Component, computed, input } from '@angular/core';
import { MatIcon } from '@angular/material/icon';

import type { ReleaseSummary } from '@shared/contracts/releases';
import { signatureLine } from '../locks/lock-request';

/** The signature of a release as a list row shows it (21 CFR 11.50: printed name, meaning, UTC time). */
@Component({
  selector: 'app-release-signature',
  imports: [MatIcon],
  template: `
    <mat-icon aria-hidden="true">signature</mat-icon>
    @if (signed(); as line) {
      <span data-testid="release-signature-line">{{ line }}</span>
    } @else {
      <span class="problem">{{ release().requestedBy }} · Released · the signature record cannot be found</span>
    }
  `,
  styles: `
    :host {
      display: flex;
      gap: 0.25rem;
      align-items: flex-start;
    }
    .problem {
      color: var(--mat-sys-error);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReleaseSignature {
  readonly release = input.required<ReleaseSummary>();

  /** "Priya Halloran · Released · 2026-12-02 10:15:30 UTC". */
  protected readonly signed = computed(() => {
    const signature = this.release().signature;
    return signature ? signatureLine({ ...signature, valid: true }) : null;
  });
}
