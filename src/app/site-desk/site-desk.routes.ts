import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { SiteDeskHome } from './site-desk-home/site-desk-home';

/** Site desk: open to users holding the site-coordinator role in at least one study. */
export const SITE_DESK_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('site-coordinator')],
    children: [{ path: '', component: SiteDeskHome, title: 'Site desk · Tidemark' }],
  },
];
