import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';

import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { AreaWelcome } from '../../ui/area-welcome/area-welcome';

/** Home of the Adjudication area: what an adjudicator does here, and in which studies. */
@Component({
  selector: 'app-adjudication-home',
  imports: [AreaWelcome],
  templateUrl: './adjudication-home.html',
  styleUrl: './adjudication-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class AdjudicationHome {
  private readonly session = inject(AuthSession);

  protected readonly roleLabel = ROLE_LABELS['adjudicator'];
  protected readonly assignments = computed(() => this.session.assignmentsFor('adjudicator'));
}
