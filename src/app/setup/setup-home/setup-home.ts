import { ChangeDetectionStrategy, Component, DestroyRef, computed, inject } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatDialog } from '@angular/material/dialog';
import { MatIcon } from '@angular/material/icon';
import { Router, RouterLink } from '@angular/router';

import type { StudySetup } from '@shared/contracts/setup';
import type { StudySummary } from '@shared/contracts/studies';
import { AuthSession } from '../../core/auth/auth-session';
import { SetupApi } from '../setup-api';
import { NewStudyDialog } from './new-study-dialog';

/** Home of the Study setup area: the studies the user administers, and a way to start a new one. */
@Component({
  selector: 'app-setup-home',
  imports: [MatButton, MatIcon, RouterLink],
  templateUrl: './setup-home.html',
  styleUrl: './setup-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SetupHome {
  private readonly session = inject(AuthSession);
  private readonly dialog = inject(MatDialog);
  private readonly router = inject(Router);
  private readonly destroyRef = inject(DestroyRef);

  protected readonly studies = inject(SetupApi).studies();
  /** Studies in which the user is study admin, by code. */
  protected readonly administered = computed<readonly StudySummary[]>(() =>
    (this.studies.hasValue() ? this.studies.value() : []).filter((study) => study.myRoles.includes('study-admin')),
  );

  protected openNewStudy(): void {
    this.dialog
      .open<NewStudyDialog, void, StudySetup>(NewStudyDialog, { width: '36rem' })
      .afterClosed()
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe((study) => {
        if (study) void this.openCreated(study);
      });
  }

  /** The new study's role shows in the session only after asking the server again. */
  private async openCreated(study: StudySetup): Promise<void> {
    await this.session.reload();
    this.studies.reload();
    await this.router.navigate(['/setup', 'studies', study.id, 'study']);
  }
}
