import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { ReadingHome } from './reading-home/reading-home';

/** Reading room: open to users holding the over-reader role in at least one study. */
export const READING_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('over-reader')],
    children: [{ path: '', component: ReadingHome, title: 'Reading room · Tidemark' }],
  },
];
