import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { RouterLink } from '@angular/router';

import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { AreaWelcome } from '../../ui/area-welcome/area-welcome';
import { OVERSIGHT_PAGES } from '../oversight-tabs/oversight-tabs';

/** Home of the Audit & oversight area: what a monitor does here, and each study's trail and dashboards. */
@Component({
  selector: 'app-oversight-home',
  imports: [AreaWelcome, MatButton, MatIcon, RouterLink],
  templateUrl: './oversight-home.html',
  styleUrl: './oversight-home.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class OversightHome {
  private readonly session = inject(AuthSession);

  protected readonly roleLabel = ROLE_LABELS['monitor'];
  protected readonly pages = OVERSIGHT_PAGES;
  protected readonly assignments = computed(() => this.session.assignmentsFor('monitor'));
}
