import { DatePipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';
import { MatTableModule } from '@angular/material/table';
import { RouterLink } from '@angular/router';

import { EQUATIONS_SHORT_NAMES, type ReferenceSet } from '@shared/contracts/reference-sets';
import { AuthSession } from '../../../core/auth/auth-session';
import { SetupReferenceSetsApi } from '../../setup-reference-sets-api';
import { ReferenceSetImport } from '../reference-set-import/reference-set-import';
import { fileSizeText, shortSha256 } from '../reference-set-labels';
import { StudyReferenceSetPin } from '../study-reference-set/study-reference-set';

/**
 * Reference sets: import the publisher's tables, see what each import checked, and pin a set to
 * each study the user administers.
 */
@Component({
  selector: 'app-reference-sets-page',
  imports: [DatePipe, MatTableModule, RouterLink, ReferenceSetImport, StudyReferenceSetPin],
  templateUrl: './reference-sets-page.html',
  styleUrl: './reference-sets-page.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReferenceSetsPage {
  private readonly session = inject(AuthSession);

  protected readonly sets = inject(SetupReferenceSetsApi).referenceSets();
  protected readonly setList = computed(() => (this.sets.hasValue() ? this.sets.value() : []));
  protected readonly adminStudies = computed(() => this.session.assignmentsFor('study-admin'));
  protected readonly columns = ['label', 'equations', 'file', 'sha256', 'imported', 'validation'] as const;
  protected readonly fileSizeText = fileSizeText;
  protected readonly shortSha256 = shortSha256;

  protected equationsOf(set: ReferenceSet): string {
    return EQUATIONS_SHORT_NAMES[set.equationsId];
  }
}
