import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { OversightHome } from './oversight-home/oversight-home';

/** Audit & oversight: open to users holding the monitor role in at least one study. */
export const OVERSIGHT_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('monitor')],
    children: [{ path: '', component: OversightHome, title: 'Audit & oversight · Tidemark' }],
  },
];
