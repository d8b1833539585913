import { ChangeDetectionStrategy, Component, inject } from '@angular/core';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatOption, MatSelect } from '@angular/material/select';

import { SiteDeskSelection, siteLabel } from '../site-desk-selection';

/** Chooses the study and site a site-desk page works on; the choice holds across the area. */
@Component({
  selector: 'app-site-picker',
  imports: [MatFormField, MatLabel, MatHint, MatSelect, MatOption],
  template: `
    @if (selection.studies().length > 1) {
      <mat-form-field subscriptSizing="dynamic">
        <mat-label>Study</mat-label>
        <mat-select [value]="selection.studyId()" (valueChange)="selection.chooseStudy($event)">
          @for (study of selection.studies(); track study.studyId) {
            <mat-option [value]="study.studyId">{{ study.studyCode }}</mat-option>
          }
        </mat-select>
      </mat-form-field>
    } @else if (selection.study(); as study) {
      <p class="single-study">Study <strong>{{ study.studyCode }}</strong></p>
    }
    <mat-form-field subscriptSizing="dynamic" class="site-field">
      <mat-label>Site</mat-label>
      <mat-select
        [value]="selection.siteId()"
        [disabled]="selection.sites().length === 0"
        (valueChange)="selection.chooseSite($event)"
      >
        @for (site of selection.sites(); track site.id) {
          <mat-option [value]="site.id">{{ labelOf(site) }}</mat-option>
        }
      </mat-select>
      @if (selection.site(); as site) {
        <mat-hint>Times are shown on the site's clock ({{ site.timeZone }}).</mat-hint>
      } @else if (selection.sitesResource.isLoading()) {
        <mat-hint>Loading your sites…</mat-hint>
      } @else {
        <mat-hint>No site of this study is assigned to you.</mat-hint>
      }
    </mat-form-field>
  `,
  styles: `
    :host {
      display: flex;
      flex-wrap: wrap;
      gap: 0.5rem 1rem;
      align-items: flex-start;
    }
    .site-field {
      min-width: min(100%, 22rem);
    }
    .single-study {
      margin: 1rem 0 0;
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SitePicker {
  protected readonly selection = inject(SiteDeskSelection);
  protected readonly labelOf = siteLabel;
}
