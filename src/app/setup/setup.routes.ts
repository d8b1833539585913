import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { SetupHome } from './setup-home/setup-home';

/** Study setup: open to users holding the study-admin role in at least one study. */
export const SETUP_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('study-admin')],
    children: [{ path: '', component: SetupHome, title: 'Study setup · Tidemark' }],
  },
];
