import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { CalibrationLogPage } from './calibration-log/calibration-log';
import { RegisterSessionPage } from './register-session/register-session';
import { SessionDetailPage } from './session-detail/session-detail';
import { SiteDeskHome } from './site-desk-home/site-desk-home';
import { SiteDeskLayout } from './site-desk-layout/site-desk-layout';
import { SiteDeskSelection } from './site-desk-selection';

/** Site desk: open to users holding the site-coordinator role in at least one study. */
export const SITE_DESK_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('site-coordinator')],
    component: SiteDeskLayout,
    providers: [SiteDeskSelection],
    children: [
      { path: '', component: SiteDeskHome, title: 'Site desk · Tidemark' },
      { path: 'register', component: RegisterSessionPage, title: 'Register a session · Site desk · Tidemark' },
      { path: 'sessions/:studyId/:sessionId', component: SessionDetailPage, title: 'Session · Site desk · Tidemark' },
      { path: 'calibration', component: CalibrationLogPage, title: 'Calibration log · Site desk · Tidemark' },
    ],
  },
];
