import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { AdjudicationHome } from './adjudication-home/adjudication-home';
import { AdjudicationPage } from './adjudication-page/adjudication-page';

/** Adjudication: open to users holding the adjudicator role in at least one study. */
export const ADJUDICATION_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('adjudicator')],
    children: [
      { path: '', component: AdjudicationHome, title: 'Adjudication · Tidemark' },
      { path: 'adjudications/:studyId/:readId', component: AdjudicationPage, title: 'Adjudication read · Tidemark' },
    ],
  },
];
