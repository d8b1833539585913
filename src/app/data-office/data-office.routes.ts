import { Routes } from '@angular/router';

import { roleGuard } from '../core/auth/role-guard';
import { DataOfficeHome } from './data-office-home/data-office-home';

/** Data office: open to users holding the data-manager role in at least one study. */
export const DATA_OFFICE_ROUTES: Routes = [
  {
    path: '',
    canActivate: [roleGuard('data-manager')],
    children: [{ path: '', component: DataOfficeHome, title: 'Data office · Tidemark' }],
  },
];
