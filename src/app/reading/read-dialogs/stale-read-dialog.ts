import { ChangeDetectionStrategy, Component, inject } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MAT_DIALOG_DATA, MatDialogActions, MatDialogClose, MatDialogContent, MatDialogTitle } from '@angular/material/dialog';

import type { StaleRead } from '../reading-api';

/** What the reader chose after a stale save: load the saved version, or save theirs over it. */
export type StaleReadChoice = 'reload' | 'overwrite';

/**
 * A save refused because the read was saved elsewhere (another tab or window) after this form
 * was loaded: what changed, and the reader's choice. Closing without a choice keeps the draft
 * on screen, unsaved.
 */
@Component({
  selector: 'app-stale-read-dialog',
  imports: [MatDialogTitle, MatDialogContent, MatDialogActions, MatDialogClose, MatButton],
  template: `
    <h2 mat-dialog-title>This read was saved elsewhere</h2>
    <mat-dialog-content>
      <p>
        Since you opened it, the read was saved from another tab or window (now version
        {{ data.currentVersion }}). Your changes are not saved yet.
      </p>
      @if (data.changed.length) {
        <p>What changed there:</p>
        <ul data-testid="stale-changes">
          @for (change of data.changed; track $index) {
            <li>{{ change }}</li>
          }
        </ul>
      }
    </mat-dialog-content>
    <mat-dialog-actions align="end">
      <button mat-button type="button" mat-dialog-close>Keep my draft on screen</button>
      <button mat-button type="button" data-testid="stale-overwrite" [mat-dialog-close]="overwrite">Save mine over it</button>
      <button mat-flat-button type="button" data-testid="stale-reload" [mat-dialog-close]="reload">Load the saved version</button>
    </mat-dialog-actions>
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class StaleReadDialog {
  protected readonly data = inject<StaleRead>(MAT_DIALOG_DATA);
  protected readonly reload: StaleReadChoice = 'reload';
  protected readonly overwrite: StaleReadChoice = 'overwrite';
}
