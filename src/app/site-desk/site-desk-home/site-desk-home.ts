import { ChangeDetectionStrategy, Component, computed, inject } from '@angular/core';

import { AuthSession } from '../../core/auth/auth-session';
import { ROLE_LABELS } from '../../core/auth/role-labels';
import { AreaWelcome } from '../../ui/area-welcome/area-welcome';
import { SiteDeskApi } from '../site-desk-api';

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

  // Coordinators usually work in one study; its sites give the numbers and names to show.
  private readonly sites = inject(SiteDeskApi).sitesOf(() => this.assignments()[0]?.studyId);

  /** Site id -> "number · name (country)", for the sites the server lets this user see. */
  protected readonly siteLabels = computed<Record<string, string>>(() =>
    Object.fromEntries(
      (this.sites.hasValue() ? this.sites.value() : []).map((site) => [
        site.id,
        `${site.number} · ${site.name} (${site.countryCode})`,
      ]),
    ),
  );
}
