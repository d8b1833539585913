import type { Site, StudySummary } from '../../shared/contracts/studies.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import type { SiteScope } from '../http/access.js';
import type { StudyRepository } from './study-repository.js';

/** What each caller may see of studies and sites. */
export class StudyService {
  constructor(private readonly repository: StudyRepository) {}

  studiesOf(principal: Principal): StudySummary[] {
    const studyIds = [...new Set(principal.assignments.map((assignment) => assignment.studyId))];
    return this.repository.findStudies(studyIds).map((study) => ({
      ...study,
      myRoles: principal.assignments.filter((a) => a.studyId === study.id).map((a) => a.role),
    }));
  }

  study(principal: Principal, studyId: string): StudySummary {
    const study = this.repository.findStudy(studyId);
    if (!study) throw AppError.notFound('There is no such study.');
    return { ...study, myRoles: principal.assignments.filter((a) => a.studyId === study.id).map((a) => a.role) };
  }

  /** Sites in the caller's scope: a coordinator sees only their own sites. */
  sites(studyId: string, scope: SiteScope): Site[] {
    return this.repository.findSites(studyId, scope.allSites ? undefined : scope.siteIds);
  }

  site(studyId: string, siteId: string): Site {
    const site = this.repository.findSite(studyId, siteId);
    if (!site) throw AppError.notFound('There is no such site in this study.');
    return site;
  }
}
