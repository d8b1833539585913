import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { RouterLink } from '@angular/router';

import type { Role } from '@shared/contracts/auth';
import { AuthSession } from '../core/auth/auth-session';
import { ROLE_LABELS } from '../core/auth/role-labels';
import { APP_AREAS, areaForUrl } from '../core/layout/app-areas';

/** The 403 page: which area was refused, which roles the user holds, and how to get access. */
@Component({
  selector: 'app-forbidden',
  imports: [MatButton, RouterLink],
  templateUrl: './forbidden.html',
  styleUrl: './forbidden.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class Forbidden {
  private readonly session = inject(AuthSession);

  /** Query parameter: the URL that was refused. */
  readonly from = input<string>();

  protected readonly refusedArea = computed(() => areaForUrl(this.from()));
  protected readonly requiredRoleLabel = computed(() => {
    const area = this.refusedArea();
    return area ? ROLE_LABELS[area.role] : null;
  });
  protected readonly heldRoleLabels = computed(() =>
    (Object.keys(ROLE_LABELS) as Role[])
      .filter((role) => this.session.hasRole(role))
      .map((role) => ROLE_LABELS[role]),
  );
  /** Whether the user has any area to go back to. */
  protected readonly hasHomeArea = computed(() =>
    APP_AREAS.some((area) => this.session.hasRole(area.role)),
  );
}
