import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatTabLink, MatTabNav } from '@angular/material/tabs';
import { RouterLink, RouterLinkActive } from '@angular/router';

import { AuthSession } from '../../core/auth/auth-session';

/** The oversight pages of one study. */
export const OVERSIGHT_PAGES = [
  { path: 'audit-trail', label: 'Audit trail', icon: 'history' },
  { path: 'sites', label: 'Site performance', icon: 'location_on' },
  { path: 'readers', label: 'Reader performance', icon: 'group' },
] as const;

/** The head of every oversight page of a study: the study, a way back, and the three pages as tabs. */
@Component({
  selector: 'app-oversight-tabs',
  imports: [MatButton, MatIcon, MatTabNav, MatTabLink, RouterLink, RouterLinkActive],
  template: `
    <header class="head">
      <a mat-button routerLink="/oversight" class="back">
        <mat-icon aria-hidden="true">arrow_back</mat-icon>
        Audit &amp; oversight
      </a>
      <h1>{{ heading() }} · {{ studyCode() }}</h1>
      <p class="read-only" role="note"><mat-icon aria-hidden="true">visibility</mat-icon> Read-only: nothing here changes study data.</p>
    </header>
    <nav mat-tab-nav-bar aria-label="Oversight pages of this study">
      @for (page of pages; track page.path) {
        <a mat-tab-link [routerLink]="['/oversight', 'studies', studyId(), page.path]" routerLinkActive #link="routerLinkActive" [active]="link.isActive">
          <mat-icon class="tab-icon" aria-hidden="true">{{ page.icon }}</mat-icon>
          {{ page.label }}
        </a>
      }
    </nav>
  `,
  styles: `
    :host {
      display: block;
      margin-bottom: 1rem;
    }
    .head h1 {
      margin: 0.25rem 0;
      font: var(--mat-sys-headline-small);
    }
    .back {
      margin-left: -0.75rem;
    }
    .read-only {
      display: flex;
      gap: 0.375rem;
      align-items: center;
      margin: 0 0 0.5rem;
      color: var(--mat-sys-on-surface-variant);
      font: var(--mat-sys-body-medium);
    }
    .tab-icon {
      margin-right: 0.5rem;
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class OversightTabs {
  private readonly session = inject(AuthSession);

  readonly studyId = input.required<string>();
  /** The page's own heading. */
  readonly heading = input.required<string>();

  protected readonly pages = OVERSIGHT_PAGES;
  protected readonly studyCode = computed(
    () => this.session.assignments().find((assignment) => assignment.studyId === this.studyId())?.studyCode ?? this.studyId(),
  );
}
