import type { Role } from '@shared/contracts/auth';

/** How each role is named to people, in the singular. */
export const ROLE_LABELS: Readonly<Record<Role, string>> = {
  'site-coordinator': 'Site coordinator',
  'over-reader': 'Over-reader',
  adjudicator: 'Adjudicator',
  'data-manager': 'Data manager',
  monitor: 'Monitor',
  'study-admin': 'Study admin',
};
