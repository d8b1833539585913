import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { ReadPage } from './read-page/read-page';
import { ReadingHome } from './reading-home/reading-home';

/** Reading room: open to users holding the over-reader role in at least one study. */
export const READING_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('over-reader')],
    children: [
      { path: '', component: ReadingHome, title: 'Reading room · Tidemark' },
      { path: 'reads/:studyId/:readId', component: ReadPage, title: 'Read · Reading room · Tidemark' },
    ],
  },
];
