import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { RouterLink } from '@angular/router';

import { ApiError } from '../../core/http/api-error';
import type { ComparedReads } from '../../reading/read-comparison/read-comparison';
import { ReadWorkspaceView } from '../../reading/read-workspace/read-workspace';
import { AdjudicationApi } from '../adjudication-api';

/**
 * One adjudication: `adjudications/:studyId/:readId`. The adjudicator's own read in the shared
 * workspace, with Read A and Read B side by side and where they differ.
 */
@Component({
  selector: 'app-adjudication-page',
  imports: [MatIcon, MatProgressBar, RouterLink, ReadWorkspaceView],
  template: `
    <a class="back-link" routerLink="/adjudication"><mat-icon aria-hidden="true">arrow_back</mat-icon>Adjudication queue</a>
    @if (comparison(); as comparison) {
      <app-read-workspace
        [studyId]="studyId()"
        [readId]="readId()"
        [signRequested]="sign() === '1'"
        [comparison]="comparison"
        homeLink="/adjudication"
      />
    } @else if (loadError(); as message) {
      <h1>Adjudication</h1>
      <p role="alert">{{ message }}</p>
    } @else {
      <h1>Adjudication</h1>
      <mat-progress-bar mode="indeterminate" aria-label="Loading the adjudication" />
    }
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
export class AdjudicationPage {
  /** From the route `adjudications/:studyId/:readId`. */
  readonly studyId = input.required<string>();
  readonly readId = input.required<string>();
  /** Query parameter: `1` when back from the fresh sign-in that signing needs. */
  readonly sign = input<string>();

  private readonly view = inject(AdjudicationApi).view(
    () => this.studyId(),
    () => this.readId(),
  );
  protected readonly comparison = computed<ComparedReads | null>(() => {
    if (!this.view.hasValue()) return null;
    const { compared, differences } = this.view.value();
    return { compared, differences };
  });
  protected readonly loadError = computed(() => {
    const error = this.view.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'This adjudication could not be loaded. Reload the page to try again.';
  });
}
