import { Injectable, computed, inject, signal } from '@angular/core';

import type { RoleAssignment } from '@shared/contracts/auth';
import type { Site } from '@shared/contracts/studies';
import { AuthSession } from '../core/auth/auth-session';
import { SiteDeskApi } from './site-desk-api';

/**
 * The study and site the coordinator is working on, shared by the pages of the site desk so a
 * choice made on one page holds on the next. Provided by the area's routes.
 */
@Injectable()
export class SiteDeskSelection {
  private readonly session = inject(AuthSession);
  private readonly chosenStudyId = signal<string | null>(null);
  private readonly chosenSiteId = signal<string | null>(null);

  /** The studies in which the user coordinates sites. */
  readonly studies = computed<readonly RoleAssignment[]>(() => this.session.assignmentsFor('site-coordinator'));

  /** The chosen study, or the first one while nothing was chosen. */
  readonly study = computed<RoleAssignment | undefined>(() => {
    const studies = this.studies();
    return studies.find((study) => study.studyId === this.chosenStudyId()) ?? studies[0];
  });
  readonly studyId = computed(() => this.study()?.studyId);

  /** The sites of the chosen study that the server lets this user see. */
  readonly sitesResource = inject(SiteDeskApi).sitesOf(() => this.studyId());
  readonly sites = computed<readonly Site[]>(() => (this.sitesResource.hasValue() ? this.sitesResource.value() : []));

  /** The chosen site, or the first one while nothing was chosen. */
  readonly site = computed<Site | undefined>(() => {
    const sites = this.sites();
    return sites.find((site) => site.id === this.chosenSiteId()) ?? sites[0];
  });
  readonly siteId = computed(() => this.site()?.id);

  chooseStudy(studyId: string): void {
    this.chosenStudyId.set(studyId);
    this.chosenSiteId.set(null);
  }

  chooseSite(siteId: string): void {
    this.chosenSiteId.set(siteId);
  }
}

/** `101 · Harbour Clinic (NO)`: a site as coordinators know it. */
export function siteLabel(site: Site): string {
  return `${site.number} · ${site.name} (${site.countryCode})`;
}
