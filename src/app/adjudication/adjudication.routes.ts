import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { AdjudicationHome } from './adjudication-home/adjudication-home';

/** Adjudication: open to users holding the adjudicator role in at least one study. */
export const ADJUDICATION_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('adjudicator')],
    children: [{ path: '', component: AdjudicationHome, title: 'Adjudication · Tidemark' }],
  },
];
