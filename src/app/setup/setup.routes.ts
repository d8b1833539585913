import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { PeopleManager } from './people/people-manager';
import { ReferenceSetReport } from './reference-sets/reference-set-report/reference-set-report';
import { ReferenceSetsPage } from './reference-sets/reference-sets-page/reference-sets-page';
import { SetupHome } from './setup-home/setup-home';
import { SiteManager } from './sites/site-manager';
import { ScheduleEditor } from './study-editor/schedule-editor/schedule-editor';
import { StudyEditor } from './study-editor/study-editor';
import { StudyEditorContext } from './study-editor/study-editor-context';
import { StudySettings } from './study-editor/study-settings/study-settings';

/**
 * Study setup: open to users holding the study-admin role in at least one study. Inside a study
 * the server checks the role in that very study; a page it refuses says so.
 */
export const SETUP_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('study-admin')],
    children: [
      { path: '', component: SetupHome, title: 'Study setup · Tidemark' },
      {
        path: 'studies/:studyId',
        component: StudyEditor,
        providers: [StudyEditorContext],
        children: [
          { path: '', pathMatch: 'full', redirectTo: 'study' },
          { path: 'study', component: StudySettings, title: 'Study settings · Study setup · Tidemark' },
          { path: 'schedule', component: ScheduleEditor, title: 'Visit schedule · Study setup · Tidemark' },
          { path: 'sites', component: SiteManager, title: 'Sites · Study setup · Tidemark' },
          { path: 'people', component: PeopleManager, title: 'People · Study setup · Tidemark' },
        ],
      },
      { path: 'rule-sets', loadChildren: () => import('./rule-sets/rule-sets.routes').then((m) => m.RULE_SET_ROUTES) },
      { path: 'reference-sets', component: ReferenceSetsPage, title: 'Reference sets · Study setup · Tidemark' },
      {
        path: 'reference-sets/:referenceSetId',
        component: ReferenceSetReport,
        title: 'Reference set report · Study setup · Tidemark',
      },
    ],
  },
];
