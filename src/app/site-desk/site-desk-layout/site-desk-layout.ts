import { ChangeDetectionStrategy, Component } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { RouterLink, RouterLinkActive, RouterOutlet } from '@angular/router';

/** Frame of the site desk: the area's own short navigation above each page. */
@Component({
  selector: 'app-site-desk-layout',
  imports: [MatButton, MatIcon, RouterLink, RouterLinkActive, RouterOutlet],
  template: `
    <nav class="area-nav" aria-label="Site desk">
      @for (link of links; track link.path) {
        <a
          mat-button
          [routerLink]="link.path"
          routerLinkActive="active-link"
          [routerLinkActiveOptions]="{ exact: true }"
          ariaCurrentWhenActive="page"
        >
          <mat-icon>{{ link.icon }}</mat-icon>
          {{ link.label }}
        </a>
      }
    </nav>
    <router-outlet />
  `,
  styles: `
    :host {
      display: block;
    }
    .area-nav {
      display: flex;
      flex-wrap: wrap;
      gap: 0.25rem;
      margin: -0.5rem 0 1.25rem;
      padding-bottom: 0.5rem;
      border-bottom: 1px solid var(--mat-sys-outline-variant);
    }
    .active-link {
      background: var(--mat-sys-secondary-container);
      color: var(--mat-sys-on-secondary-container);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SiteDeskLayout {
  protected readonly links = [
    { path: '/site-desk', label: 'Sessions', icon: 'list_alt' },
    { path: '/site-desk/register', label: 'Register', icon: 'add_circle' },
    { path: '/site-desk/calibration', label: 'Calibration log', icon: 'straighten' },
  ] as const;
}
