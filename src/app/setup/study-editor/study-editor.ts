import { ChangeDetectionStrategy, Component, computed, effect, inject, input } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatTabLink, MatTabNav, MatTabNavPanel } from '@angular/material/tabs';
import { RouterLink, RouterLinkActive, RouterOutlet } from '@angular/router';

import { StudyEditorContext } from './study-editor-context';

/** The frame of one study's setup: its name, whether changes need a reason, and the four tabs. */
@Component({
  selector: 'app-study-editor',
  imports: [MatButton, MatIcon, MatTabNav, MatTabLink, MatTabNavPanel, RouterLink, RouterLinkActive, RouterOutlet],
  templateUrl: './study-editor.html',
  styleUrl: './study-editor.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class StudyEditor {
  protected readonly context = inject(StudyEditorContext);

  /** From the route. */
  readonly studyId = input.required<string>();

  protected readonly tabs = [
    { path: 'study', label: 'Study', icon: 'description' },
    { path: 'schedule', label: 'Schedule', icon: 'event' },
    { path: 'sites', label: 'Sites', icon: 'location_on' },
    { path: 'people', label: 'People', icon: 'group' },
  ] as const;

  protected readonly setup = computed(() => (this.context.setup.hasValue() ? this.context.setup.value() : undefined));

  constructor() {
    effect(() => this.context.studyId.set(this.studyId()));
  }
}
