import { BreakpointObserver } from '@angular/cdk/layout';
import {
  ChangeDetectionStrategy,
  Component,
  ElementRef,
  computed,
  inject,
  signal,
  viewChild,
} from '@angular/core';
import { toSignal } from '@angular/core/rxjs-interop';
import { MatButton, MatIconButton } from '@angular/material/button';
import { MatChip, MatChipSet } from '@angular/material/chips';
import { MatIcon } from '@angular/material/icon';
import { MatListItem, MatListItemIcon, MatListItemTitle, MatNavList } from '@angular/material/list';
import { MatSidenav, MatSidenavContainer, MatSidenavContent } from '@angular/material/sidenav';
import { MatSnackBar } from '@angular/material/snack-bar';
import { MatToolbar } from '@angular/material/toolbar';
import { MatTooltip } from '@angular/material/tooltip';
import { Router, RouterLink, RouterLinkActive, RouterOutlet } from '@angular/router';
import { map } from 'rxjs';

import type { Role } from '@shared/contracts/auth';
import { ApiError } from '../http/api-error';
import { AuthSession } from '../auth/auth-session';
import { ROLE_LABELS } from '../auth/role-labels';
import { APP_AREAS } from './app-areas';

/** Below this width the navigation becomes a drawer opened from the app bar. */
const NARROW_QUERY = '(max-width: 52.5rem)';

/** Frame around every signed-in page: app bar, the user's areas, and the main content. */
@Component({
  selector: 'app-shell',
  imports: [
    MatToolbar,
    MatTooltip,
    MatButton,
    MatIconButton,
    MatIcon,
    MatChipSet,
    MatChip,
    MatSidenavContainer,
    MatSidenav,
    MatSidenavContent,
    MatNavList,
    MatListItem,
    MatListItemIcon,
    MatListItemTitle,
    RouterLink,
    RouterLinkActive,
    RouterOutlet,
  ],
  templateUrl: './app-shell.html',
  styleUrl: './app-shell.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class AppShell {
  private readonly session = inject(AuthSession);
  private readonly router = inject(Router);
  private readonly snackBar = inject(MatSnackBar);
  private readonly mainContent = viewChild.required<ElementRef<HTMLElement>>('mainContent');
  private readonly sidenav = viewChild.required(MatSidenav);

  protected readonly user = this.session.user;
  /** Only the areas the user holds a role for, in catalogue order. */
  protected readonly areas = computed(() => APP_AREAS.filter((area) => this.session.hasRole(area.role)));
  protected readonly roleLabels = computed(() =>
    (Object.keys(ROLE_LABELS) as Role[]).filter((role) => this.session.hasRole(role)).map((role) => ROLE_LABELS[role]),
  );
  /** Whether the screen is narrow enough to hide the navigation in a drawer. */
  protected readonly isNarrow = toSignal(
    inject(BreakpointObserver)
      .observe(NARROW_QUERY)
      .pipe(map((state) => state.matches)),
    { initialValue: false },
  );
  /** Whether a sign-out request is in flight. */
  protected readonly signingOut = signal(false);

  /** Moves keyboard focus to the main content; a plain `#hash` link would leave the router page. */
  protected focusMainContent(event: Event): void {
    event.preventDefault();
    this.mainContent().nativeElement.focus();
  }

  protected closeNavigationIfDrawer(): void {
    if (this.isNarrow()) void this.sidenav().close();
  }

  protected async signOut(): Promise<void> {
    this.signingOut.set(true);
    try {
      await this.session.signOut();
      await this.router.navigateByUrl('/sign-in');
    } catch (error: unknown) {
      // ApiError: the server refused or could not be reached; the user stays signed in and is told.
      if (!(error instanceof ApiError)) throw error;
      this.snackBar.open(`Sign-out did not complete. ${error.message}`, 'Dismiss', { duration: 8000 });
    } finally {
      this.signingOut.set(false);
    }
  }
}
