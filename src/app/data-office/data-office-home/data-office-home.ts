import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';
import { MatAnchor } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { RouterLink } from '@angular/router';

import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { AreaWelcome } from '../../ui/area-welcome/area-welcome';

/** Home of the Data office area: what a data manager does here, and in which studies. */
@Component({
  selector: 'app-data-office-home',
  imports: [AreaWelcome, MatAnchor, MatIcon, RouterLink],
  templateUrl: './data-office-home.html',
  styleUrl: './data-office-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class DataOfficeHome {
  private readonly session = inject(AuthSession);

  protected readonly roleLabel = ROLE_LABELS['data-manager'];
  protected readonly assignments = computed(() => this.session.assignmentsFor('data-manager'));
}
