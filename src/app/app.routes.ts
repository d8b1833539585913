import { Routes } from '@angular/router';

import { signedInGuard } from './core/auth/role-guard';
import { AppShell } from './core/layout/app-shell';
import { firstAreaGuard } from './core/layout/first-area-guard';
import { Forbidden } from './forbidden/forbidden';
import { NotFound } from './not-found/not-found';
import { SignIn } from './sign-in/sign-in';

/** Top-level routes. Each area is lazy and guards itself by role in its own routes file. */
export const APP_ROUTES: Routes = [
  { path: 'sign-in', component: SignIn, title: 'Sign in · Tidemark' },
  {
    path: '',
    component: AppShell,
    canActivate: [signedInGuard],
    children: [
      { path: '', pathMatch: 'full', canActivate: [firstAreaGuard], children: [] },
      {
        path: 'site-desk',
        loadChildren: () => import('./site-desk/site-desk.routes').then((m) => m.SITE_DESK_ROUTES),
      },
      {
        path: 'reading',
        loadChildren: () => import('./reading/reading.routes').then((m) => m.READING_ROUTES),
      },
      {
        path: 'adjudication',
        loadChildren: () =>
          import('./adjudication/adjudication.routes').then((m) => m.ADJUDICATION_ROUTES),
      },
      {
        path: 'data-office',
        loadChildren: () =>
          import('./data-office/data-office.routes').then((m) => m.DATA_OFFICE_ROUTES),
      },
      {
        path: 'oversight',
        loadChildren: () => import('./oversight/oversight.routes').then((m) => m.OVERSIGHT_ROUTES),
      },
      {
        path: 'setup',
        loadChildren: () => import('./setup/setup.routes').then((m) => m.SETUP_ROUTES),
      },
      {
        path: 'messages',
        loadChildren: () => import('./messages/messages.routes').then((m) => m.MESSAGES_ROUTES),
      },
      { path: 'forbidden', component: Forbidden, title: 'No access · Tidemark' },
    ],
  },
  { path: '**', component: NotFound, title: 'Page not found · Tidemark' },
];
