import type { Role } from '../../shared/contracts/auth.js';

/**
 * The demo scenario: an invented sponsor, compound, trial, sites and people.
 * Any likeness to real organisations or persons is unintended.
 */
export const DEMO_PASSWORD = 'tidemark-demo';

export const DEMO_STUDY = {
  id: 'study-hlx-201',
  code: 'HLX-201',
  title: 'Phase II, randomised, placebo-controlled trial of inhaled halvoterol in moderate COPD',
  sponsor: 'Gullwing Therapeutics (fictional)',
  indication: 'Moderate chronic obstructive pulmonary disease',
  protocolRuleSetId: 'ats-ers-2019',
} as const;

export const DEMO_SITES = [
  { id: 'site-101', number: '101', name: 'Fjellvik Lung Clinic', countryCode: 'NO', timeZone: 'Europe/Oslo' },
  { id: 'site-102', number: '102', name: 'Clínica Respiratoria Alcorán', countryCode: 'ES', timeZone: 'Europe/Madrid' },
  { id: 'site-201', number: '201', name: 'Lakeshore Chest Research', countryCode: 'CA', timeZone: 'America/Toronto' },
  { id: 'site-301', number: '301', name: 'Kestrel Valley Pulmonary Unit', countryCode: 'ZA', timeZone: 'Africa/Johannesburg' },
] as const;

export interface DemoUser {
  readonly id: string;
  readonly email: string;
  readonly name: string;
  readonly roles: readonly { role: Role; siteIds?: readonly string[] }[];
}

export const DEMO_USERS: readonly DemoUser[] = [
  { id: 'user-admin', email: 'admin@tidemark.example', name: 'Odile Marchetti', roles: [{ role: 'study-admin' }] },
  {
    id: 'user-coordinator-101',
    email: 'coordinator.101@tidemark.example',
    name: 'Tove Brennsund',
    roles: [{ role: 'site-coordinator', siteIds: ['site-101'] }],
  },
  {
    id: 'user-coordinator-201',
    email: 'coordinator.201@tidemark.example',
    name: 'Marcus Okonkwo-Hale',
    roles: [{ role: 'site-coordinator', siteIds: ['site-201', 'site-301'] }],
  },
  { id: 'user-reader-1', email: 'reader.one@tidemark.example', name: 'Dr Ilse Vandermeer', roles: [{ role: 'over-reader' }] },
  { id: 'user-reader-2', email: 'reader.two@tidemark.example', name: 'Dr Rafael Quintero', roles: [{ role: 'over-reader' }] },
  {
    id: 'user-adjudicator',
    email: 'adjudicator@tidemark.example',
    name: 'Dr Amara Lindqvist',
    roles: [{ role: 'over-reader' }, { role: 'adjudicator' }],
  },
  { id: 'user-data-manager', email: 'data.manager@tidemark.example', name: 'Priya Halloran', roles: [{ role: 'data-manager' }] },
  { id: 'user-monitor', email: 'monitor@tidemark.example', name: 'Jonas Feldkirch', roles: [{ role: 'monitor' }] },
];
