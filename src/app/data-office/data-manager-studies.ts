import { computed, inject, signal } from '@angular/core';

import { AuthSession } from '../core/auth/auth-session';

/**
 * The studies the signed-in person manages data for, and the one a data-office page works on: the
 * chosen one, else the first. Create it in a field initializer (it injects).
 */
export class DataManagerStudies {
  private readonly session = inject(AuthSession);
  private readonly chosenStudyId = signal<string | undefined>(undefined);

  readonly all = computed(() => this.session.assignmentsFor('data-manager'));
  readonly current = computed(() => {
    const studies = this.all();
    return studies.find((study) => study.studyId === this.chosenStudyId()) ?? studies[0];
  });
  readonly currentId = computed(() => this.current()?.studyId);

  /** Works on this study from now on; an id the person does not manage falls back to the first. */
  choose(studyId: string | undefined): void {
    this.chosenStudyId.set(studyId);
  }
}
