import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';

import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { AreaWelcome } from '../../ui/area-welcome/area-welcome';

/** Home of the Reading room area: what an over-reader does here, and in which studies. */
@Component({
  selector: 'app-reading-home',
  imports: [AreaWelcome],
  templateUrl: './reading-home.html',
  styleUrl: './reading-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReadingHome {
  private readonly session = inject(AuthSession);

  protected readonly roleLabel = ROLE_LABELS['over-reader'];
  protected readonly assignments = computed(() => this.session.assignmentsFor('over-reader'));
}
