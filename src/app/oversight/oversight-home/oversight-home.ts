import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';

import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { AreaWelcome } from '../../ui/area-welcome/area-welcome';

/** Home of the Audit & oversight area: what a monitor does here, and in which studies. */
@Component({
  selector: 'app-oversight-home',
  imports: [AreaWelcome],
  templateUrl: './oversight-home.html',
  styleUrl: './oversight-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class OversightHome {
  private readonly session = inject(AuthSession);

  protected readonly roleLabel = ROLE_LABELS['monitor'];
  protected readonly assignments = computed(() => this.session.assignmentsFor('monitor'));
}
