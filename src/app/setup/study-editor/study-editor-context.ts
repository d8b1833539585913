import { Injectable, inject, signal } from '@angular/core';

import type { StudySetup } from '@shared/contracts/setup';
import { SetupApi } from '../setup-api';

/**
 * The study open in the editor, shared by its tabs: its id (from the route) and its settings,
 * which the header shows and the Study tab edits. Provided by the editor's route.
 */
@Injectable()
export class StudyEditorContext {
  private readonly api = inject(SetupApi);

  readonly studyId = signal<string | undefined>(undefined);
  readonly setup = this.api.setupOf(() => this.studyId());

  /** Takes the settings the server answered with after a save, without asking again. */
  replaceSetup(setup: StudySetup): void {
    this.setup.set(setup);
  }
}
