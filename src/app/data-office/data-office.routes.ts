import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { DataOfficeHome } from './data-office-home/data-office-home';
import { QueryListPage } from './query-list/query-list';

/** Data office: open to users holding the data-manager role in at least one study. */
export const DATA_OFFICE_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('data-manager')],
    children: [
      { path: '', component: DataOfficeHome, title: 'Data office · Tidemark' },
      { path: 'queries', component: QueryListPage, title: 'Queries · Data office · Tidemark' },
      { path: 'locks', loadComponent: () => import('./locks/locks-page').then((m) => m.LocksPage), title: 'Data locks · Data office · Tidemark' },
      {
        path: 'releases',
        loadComponent: () => import('./releases/releases-page').then((m) => m.ReleasesPage),
        title: 'Releases · Data office · Tidemark',
      },
      {
        // The release-ready e-mail links here.
        path: 'releases/:studyId/:releaseId',
        loadComponent: () => import('./releases/release-detail').then((m) => m.ReleaseDetailPage),
        title: 'Release · Data office · Tidemark',
      },
    ],
  },
];
