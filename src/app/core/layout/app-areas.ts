import type { Role } from '@shared/contracts/auth';

/** One user area of the app; only holders of its role see it in the navigation or may open it. */
export interface AppArea {
  /** First URL segment, without a slash. */
  readonly path: string;
  readonly label: string;
  readonly role: Role;
  /** Material Symbols ligature name. */
  readonly icon: string;
}

/** The areas in navigation order, which is also the order used to pick a user's home area. */
export const APP_AREAS: readonly AppArea[] = [
  { path: 'site-desk', label: 'Site desk', role: 'site-coordinator', icon: 'upload_file' },
  { path: 'reading', label: 'Reading room', role: 'over-reader', icon: 'pulmonology' },
  { path: 'adjudication', label: 'Adjudication', role: 'adjudicator', icon: 'balance' },
  { path: 'data-office', label: 'Data office', role: 'data-manager', icon: 'database' },
  { path: 'oversight', label: 'Audit & oversight', role: 'monitor', icon: 'fact_check' },
  { path: 'setup', label: 'Study setup', role: 'study-admin', icon: 'tune' },
];

/** The area a URL such as `/reading/queue?x=1` belongs to, if any. */
export function areaForUrl(url: string | null | undefined): AppArea | undefined {
  const firstSegment = (url ?? '').replace(/^\/+/, '').split(/[/?#;]/, 1)[0];
  return APP_AREAS.find((area) => area.path === firstSegment);
}
