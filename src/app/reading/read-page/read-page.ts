import { ChangeDetectionStrategy, Component, input } from '@angular/core';
import { MatIcon } from '@angular/material/icon';
import { RouterLink } from '@angular/router';

import { ReadWorkspaceView } from '../read-workspace/read-workspace';

/** The reading room page of one read: `reads/:studyId/:readId`, `?sign=1` to sign on arrival. */
@Component({
  selector: 'app-read-page',
  imports: [MatIcon, RouterLink, ReadWorkspaceView],
  template: `
    <a class="back-link" routerLink="/reading"><mat-icon aria-hidden="true">arrow_back</mat-icon>Reading queue</a>
    <app-read-workspace [studyId]="studyId()" [readId]="readId()" [signRequested]="sign() === '1'" homeLink="/reading" />
  `,
  styles: `
    :host {
      display: grid;
      gap: 1rem;
    }
    .back-link {
      display: inline-flex;
      gap: 0.25rem;
      align-items: center;
      justify-self: start;
      font: var(--mat-sys-label-large);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReadPage {
  /** From the route `reads/:studyId/:readId`. */
  readonly studyId = input.required<string>();
  readonly readId = input.required<string>();
  /** Query parameter: `1` when back from the fresh sign-in that signing needs. */
  readonly sign = input<string>();
}
