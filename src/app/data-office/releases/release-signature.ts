import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatIcon } from '@angular/material/icon';

import { DataOfficeReleasesApi } from '../data-office-releases-api';
import { signatureLine } from '../locks/lock-request';
import type { ReleaseSummary } from './release-contract';

/**
 * The signature of a release as a list row shows it (21 CFR 11.50: printed name, meaning, UTC
 * time). The list answer names the signer but not the signing time, so the time is read from the
 * stored manifest of a complete release; before that the row says where it will be.
 */
@Component({
  selector: 'app-release-signature',
  imports: [MatIcon],
  template: `
    <mat-icon aria-hidden="true">signature</mat-icon>
    @if (signed(); as line) {
      <span data-testid="release-signature-line">{{ line }}</span>
    } @else {
      <span>
        {{ release().requestedBy }} · Released
        <span class="note" [class.problem]="manifest.error()">{{ pendingNote() }}</span>
      </span>
    }
  `,
  styles: `
    :host {
      display: flex;
      gap: 0.25rem;
      align-items: flex-start;
    }
    .note {
      display: block;
      font: var(--mat-sys-body-small);
      color: var(--mat-sys-on-surface-variant);
    }
    .note.problem {
      color: var(--mat-sys-error);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReleaseSignature {
  private readonly api = inject(DataOfficeReleasesApi);

  readonly studyId = input.required<string>();
  readonly release = input.required<ReleaseSummary>();

  protected readonly manifest = this.api.manifestOf(
    () => this.studyId(),
    () => (this.release().status === 'complete' ? this.release().releaseId : undefined),
  );
  /** "Priya Halloran · Released · 2026-12-02 10:15:30 UTC", once the manifest is read. */
  protected readonly signed = computed(() => {
    if (!this.manifest.hasValue()) return null;
    const { signature } = this.manifest.value();
    return signatureLine({ ...signature, valid: true });
  });
  protected readonly pendingNote = computed(() => {
    if (this.manifest.error()) return 'The manifest was refused: open the release to see why.';
    switch (this.release().status) {
      case 'complete':
        return 'Reading the signing time…';
      case 'running':
        return 'Signing time in the manifest, once the release is ready.';
      default:
        return 'Signed; the release did not complete, so it has no manifest.';
    }
  });
}
