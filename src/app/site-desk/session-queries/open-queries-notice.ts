import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatIcon } from '@angular/material/icon';
import { RouterLink } from '@angular/router';

import type { Query } from '@shared/contracts/reading';
import { SiteDeskApi } from '../site-desk-api';

/**
 * On the site desk home: the queries that wait for an answer from the coordinator's sites, each a
 * link to its session. Shows nothing when there are none.
 */
@Component({
  selector: 'app-open-queries-notice',
  imports: [MatIcon, RouterLink],
  template: `
    @if (waiting().length; as count) {
      <section class="notice" aria-labelledby="open-queries-heading">
        <h2 id="open-queries-heading">
          <mat-icon aria-hidden="true">contact_support</mat-icon>
          {{ count === 1 ? '1 query waits' : count + ' queries wait' }} for your answer
        </h2>
        <ul>
          @for (query of waiting(); track query.id) {
            <li>
              <a [routerLink]="['/site-desk', 'sessions', studyId(), query.sessionId]">Subject {{ query.subjectCode }}, site {{ query.siteNumber }}</a>
              @if (query.requestRepeat) {<strong> · repeat the test requested</strong>}: {{ query.question }}
            </li>
          }
        </ul>
      </section>
    }
  `,
  styles: `
    .notice {
      padding: 0.75rem 1rem;
      border-radius: var(--mat-sys-corner-medium);
      background: var(--mat-sys-tertiary-container);
      color: var(--mat-sys-on-tertiary-container);
    }
    h2 {
      display: flex;
      gap: 0.5rem;
      align-items: center;
      margin: 0 0 0.5rem;
      font: var(--mat-sys-title-medium);
    }
    ul {
      margin: 0;
      padding-left: 1.25rem;
    }
    a {
      color: inherit;
      font-weight: 500;
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class OpenQueriesNotice {
  readonly studyId = input<string | undefined>(undefined);

  private readonly resource = inject(SiteDeskApi).openQueries(() => this.studyId());
  protected readonly waiting = computed<Query[]>(() => (this.resource.hasValue() ? this.resource.value() : []));
}
