import { Injectable, inject } from '@angular/core';
import { MatDialog } from '@angular/material/dialog';
import { map, type Observable } from 'rxjs';

import type { StaleRead } from '../reading-api';
import { ReauthenticationDialog, type ReauthenticationDialogData } from './reauthentication-dialog';
import { ReleaseDialog } from './release-dialog';
import { SignatureDialog, type SignatureDialogData } from './signature-dialog';
import { StaleReadDialog, type StaleReadChoice } from './stale-read-dialog';

/** The questions the read workspace asks in dialogs; each emits the answer once. */
@Injectable({ providedIn: 'root' })
export class ReadPrompts {
  private readonly dialog = inject(MatDialog);

  /** Whether any dialog is open (the workspace's keyboard shortcuts wait meanwhile). */
  get anyOpen(): boolean {
    return this.dialog.openDialogs.length > 0;
  }

  /** Shows the signature about to be made; emits whether the reader signs. */
  confirmSignature(data: SignatureDialogData): Observable<boolean> {
    return this.dialog
      .open<SignatureDialog, SignatureDialogData, boolean>(SignatureDialog, { data, width: '36rem' })
      .afterClosed()
      .pipe(map((confirmed) => confirmed === true));
  }

  /** Emits whether the reader releases the read to the queue. */
  confirmRelease(): Observable<boolean> {
    return this.dialog
      .open<ReleaseDialog, void, boolean>(ReleaseDialog, { width: '32rem' })
      .afterClosed()
      .pipe(map((confirmed) => confirmed === true));
  }

  /** Shows what changed elsewhere; emits the reader's choice, or undefined to keep the draft on screen. */
  resolveStaleRead(stale: StaleRead): Observable<StaleReadChoice | undefined> {
    return this.dialog.open<StaleReadDialog, StaleRead, StaleReadChoice>(StaleReadDialog, { data: stale, width: '36rem' }).afterClosed();
  }

  /** Explains the fresh sign-in signing needs, with the link that starts it. */
  explainReauthentication(data: ReauthenticationDialogData): void {
    this.dialog.open<ReauthenticationDialog, ReauthenticationDialogData>(ReauthenticationDialog, { data, width: '34rem' });
  }
}
