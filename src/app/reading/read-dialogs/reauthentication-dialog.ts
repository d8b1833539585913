import { ChangeDetectionStrategy, Component, inject } from '@angular/core';
import { MatAnchor, MatButton } from '@angular/material/button';
import { MAT_DIALOG_DATA, MatDialogActions, MatDialogClose, MatDialogContent, MatDialogTitle } from '@angular/material/dialog';

/** Where the fresh sign-in starts, and the server's own words about why it is needed. */
export interface ReauthenticationDialogData {
  /** `/auth/reauthenticate?returnTo=...`, back to this read with the signature dialog open. */
  readonly href: string;
  readonly serverMessage: string;
}

/**
 * Explains why signing needs a fresh sign-in (21 CFR 11.200: the signer identifies themself at
 * signing) and leaves for the identity provider by a full page load; the draft is saved first.
 */
@Component({
  selector: 'app-reauthentication-dialog',
  imports: [MatDialogTitle, MatDialogContent, MatDialogActions, MatDialogClose, MatAnchor, MatButton],
  template: `
    <h2 mat-dialog-title>Confirm your identity to sign</h2>
    <mat-dialog-content>
      <p>To sign, confirm your identity at the sign-in page.</p>
      <p>
        Your draft is saved. After you sign in again you come back to this read and the signature
        dialog opens, so you can sign straight away.
      </p>
      @if (data.serverMessage) {
        <p class="server">{{ data.serverMessage }}</p>
      }
    </mat-dialog-content>
    <mat-dialog-actions align="end">
      <button mat-button type="button" mat-dialog-close>Not now</button>
      <a mat-flat-button data-testid="reauthenticate-link" [href]="data.href">Go to the sign-in page</a>
    </mat-dialog-actions>
  `,
  styles: `
    .server {
      color: var(--mat-sys-on-surface-variant);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReauthenticationDialog {
  protected readonly data = inject<ReauthenticationDialogData>(MAT_DIALOG_DATA);
}
