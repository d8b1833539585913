import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';

import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { AreaWelcome } from '../../ui/area-welcome/area-welcome';

/** Home of the Study setup area: what a study admin does here, and in which studies. */
@Component({
  selector: 'app-setup-home',
  imports: [AreaWelcome],
  templateUrl: './setup-home.html',
  styleUrl: './setup-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SetupHome {
  private readonly session = inject(AuthSession);

  protected readonly roleLabel = ROLE_LABELS['study-admin'];
  protected readonly assignments = computed(() => this.session.assignmentsFor('study-admin'));
}
