import { ChangeDetectionStrategy, Component, inject } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MAT_DIALOG_DATA, MatDialogActions, MatDialogClose, MatDialogContent, MatDialogTitle } from '@angular/material/dialog';

import type { SignatureMeaning } from '@shared/contracts/reading';
import { CautionNote } from '../../ui/caution-note/caution-note';
import { SIGNATURE_MEANING_LABELS } from '../read-labels';

/** What the signature dialog shows before the reader signs. */
export interface SignatureDialogData {
  /** The signer's printed name, as it will appear with the signed read. */
  readonly printedName: string;
  readonly meaning: SignatureMeaning;
  readonly blindCode: string;
}

/** The statement the reader makes by signing (21 CFR 11.50: meaning of the signature). */
export const AUTHOR_STATEMENT = 'I confirm this over-read as its author.';

/**
 * The electronic signature of a read: who signs, what the signature means and the statement
 * signed. Closes with `true` when the reader signs, nothing otherwise.
 */
@Component({
  selector: 'app-signature-dialog',
  imports: [MatDialogTitle, MatDialogContent, MatDialogActions, MatDialogClose, MatButton, CautionNote],
  template: `
    <h2 mat-dialog-title>Sign read {{ data.blindCode }}</h2>
    <mat-dialog-content>
      <dl class="facts">
        <div><dt>Signer</dt><dd data-testid="signature-printed-name">{{ data.printedName }}</dd></div>
        <div><dt>Meaning of the signature</dt><dd>{{ meaningLabels[data.meaning] }}</dd></div>
      </dl>
      <p class="statement"><strong>{{ statement }}</strong></p>
      <p>
        Your electronic signature is the legally binding equivalent of your handwritten signature. It is
        bound to the read exactly as it is now: a later change to the read shows the signature as not
        valid. Your name, the meaning and the time (UTC) are shown with the read.
      </p>
      <app-caution-note />
    </mat-dialog-content>
    <mat-dialog-actions align="end">
      <button mat-button type="button" mat-dialog-close>Cancel</button>
      <button mat-flat-button type="button" data-testid="confirm-signature" [mat-dialog-close]="true">Sign as author</button>
    </mat-dialog-actions>
  `,
  styles: `
    .facts {
      display: grid;
      gap: 0.5rem;
      margin: 0 0 1rem;
    }
    dt {
      font: var(--mat-sys-label-medium);
      color: var(--mat-sys-on-surface-variant);
    }
    dd {
      margin: 0;
    }
    .statement {
      font: var(--mat-sys-title-medium);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SignatureDialog {
  protected readonly data = inject<SignatureDialogData>(MAT_DIALOG_DATA);
  protected readonly meaningLabels = SIGNATURE_MEANING_LABELS;
  protected readonly statement = AUTHOR_STATEMENT;
}
