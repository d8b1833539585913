import { ChangeDetectionStrategy, Component, input, output } from '@angular/core';
import { MatFormField, MatLabel } from '@angular/material/form-field';
import { MatOption, MatSelect } from '@angular/material/select';

import type { RoleAssignment } from '@shared/contracts/auth';

/** Chooses the study a queue is shown for; a single study is named, not offered. */
@Component({
  selector: 'app-study-choice',
  imports: [MatFormField, MatLabel, MatSelect, MatOption],
  template: `
    @if (studies().length > 1) {
      <mat-form-field subscriptSizing="dynamic">
        <mat-label>Study</mat-label>
        <mat-select [value]="studyId()" (valueChange)="studyChange.emit($event)">
          @for (study of studies(); track study.studyId) {
            <mat-option [value]="study.studyId">{{ study.studyCode }}</mat-option>
          }
        </mat-select>
      </mat-form-field>
    } @else if (studies()[0]; as study) {
      <p class="single">Study <strong>{{ study.studyCode }}</strong></p>
    }
  `,
  styles: `
    .single {
      margin: 0;
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class StudyChoice {
  readonly studies = input.required<readonly RoleAssignment[]>();
  readonly studyId = input<string | undefined>();
  readonly studyChange = output<string>();
}
