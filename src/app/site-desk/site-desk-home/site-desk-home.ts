import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';

import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { AreaWelcome } from '../../ui/area-welcome/area-welcome';

/** Home of the Site desk area: what a site coordinator does here, and in which studies. */
@Component({
  selector: 'app-site-desk-home',
  imports: [AreaWelcome],
  templateUrl: './site-desk-home.html',
  styleUrl: './site-desk-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SiteDeskHome {
  private readonly session = inject(AuthSession);

  protected readonly roleLabel = ROLE_LABELS['site-coordinator'];
  protected readonly assignments = computed(() => this.session.assignmentsFor('site-coordinator'));
}
