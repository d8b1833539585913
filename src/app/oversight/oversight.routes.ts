import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { AuditTrail } from './audit-trail/audit-trail';
import { OversightHome } from './oversight-home/oversight-home';
import { ReaderPerformanceDashboard } from './reader-performance/reader-performance-dashboard';
import { SitePerformanceDashboard } from './site-performance/site-performance-dashboard';

/**
 * Audit & oversight: open to users holding the monitor role in at least one study. Inside a study
 * the server checks the role in that very study; a page it refuses says so. Read-only throughout.
 */
export const OVERSIGHT_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('monitor')],
    children: [
      { path: '', component: OversightHome, title: 'Audit & oversight · Tidemark' },
      { path: 'studies/:studyId', pathMatch: 'full', redirectTo: 'studies/:studyId/audit-trail' },
      { path: 'studies/:studyId/audit-trail', component: AuditTrail, title: 'Audit trail · Audit & oversight · Tidemark' },
      { path: 'studies/:studyId/sites', component: SitePerformanceDashboard, title: 'Site performance · Audit & oversight · Tidemark' },
      { path: 'studies/:studyId/readers', component: ReaderPerformanceDashboard, title: 'Reader performance · Audit & oversight · Tidemark' },
    ],
  },
];
