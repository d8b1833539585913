import { Routes } from '@angular/router';

import { RuleSetComparePage } from './rule-set-compare/rule-set-compare';
import { RuleSetListPage } from './rule-set-list/rule-set-list';
import { RuleSetViewPage } from './rule-set-view/rule-set-view';
import { StudyReplayPage } from './study-replay/study-replay';

/** Rule-set pages, mounted at `RULE_SETS_URL` under the setup area's study-admin guard. */
export const RULE_SET_ROUTES: Routes = [
  { path: '', component: RuleSetListPage, title: 'Rule sets · Study setup · Tidemark' },
  { path: 'compare', component: RuleSetComparePage, title: 'Compare rule sets · Study setup · Tidemark' },
  { path: 'replay', component: StudyReplayPage, title: 'Try another rule set · Study setup · Tidemark' },
  { path: ':id/versions/:version', component: RuleSetViewPage, title: 'Rule set · Study setup · Tidemark' },
];
