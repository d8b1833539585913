import { ChangeDetectionStrategy, Component } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatDialogActions, MatDialogClose, MatDialogContent, MatDialogTitle } from '@angular/material/dialog';

/** Asks before a read is released; closes with `true` to release. */
@Component({
  selector: 'app-release-dialog',
  imports: [MatDialogTitle, MatDialogContent, MatDialogActions, MatDialogClose, MatButton],
  template: `
    <h2 mat-dialog-title>Release this read?</h2>
    <mat-dialog-content>
      <p>
        The session goes back to the reading queue and this read is withdrawn. Its draft verdicts are
        not used; they stay in the audit trail.
      </p>
    </mat-dialog-content>
    <mat-dialog-actions align="end">
      <button mat-button type="button" mat-dialog-close>Keep reading</button>
      <button mat-flat-button type="button" data-testid="confirm-release" [mat-dialog-close]="true">Release</button>
    </mat-dialog-actions>
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReleaseDialog {}
