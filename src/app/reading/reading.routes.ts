import { provideEnvironmentInitializer } from '@angular/core';
import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { preloadPlotly } from '../ui/effort-curves/plotly-loader';
import { ReadPage } from './read-page/read-page';
import { ReadingHome } from './reading-home/reading-home';

/** Reading room: open to users holding the over-reader role in at least one study. */
export const READING_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('over-reader')],
    // The route's injector is made while the URL is matched, before the guards wait for the user:
    // plotly (the curves) starts loading then, alongside the rest of the page's start.
    providers: [provideEnvironmentInitializer(preloadPlotly)],
    children: [
      { path: '', component: ReadingHome, title: 'Reading room · Tidemark' },
      { path: 'reads/:studyId/:readId', component: ReadPage, title: 'Read · Reading room · Tidemark' },
    ],
  },
];
