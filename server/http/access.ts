import type { Role } from '../../shared/contracts/auth.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from './app-error.js';

/** Who may call a route. There is no default: every route states one. */
export type RouteAccess =
  | { readonly kind: 'public' }
  | { readonly kind: 'signed-in' }
  /** Roles held in the study named by the `:studyId` path parameter; `:siteId` narrows site-scoped roles. */
  | { readonly kind: 'study'; readonly roles: readonly Role[] };

/** What the caller may see inside the study: all sites, or only these. */
export type SiteScope = { readonly allSites: true } | { readonly allSites: false; readonly siteIds: readonly string[] };

const ROLE_LABELS: Record<Role, string> = {
  'study-admin': 'study admin',
  'site-coordinator': 'site coordinator',
  'over-reader': 'over-reader',
  adjudicator: 'adjudicator',
  'data-manager': 'data manager',
  monitor: 'monitor',
};

export function describeRoles(roles: readonly Role[]): string {
  return roles.map((role) => ROLE_LABELS[role]).join(', ');
}

/**
 * Checks a route's access rule and returns the caller's site scope.
 * Throws 401 when nobody is signed in and 403 with the reason otherwise.
 */
export function checkAccess(
  access: RouteAccess,
  principal: Principal | undefined,
  params: Readonly<Record<string, string | undefined>>,
): SiteScope {
  if (access.kind === 'public') return { allSites: true };
  if (!principal) throw AppError.unauthenticated();
  if (access.kind === 'signed-in') return { allSites: true };

  const studyId = params['studyId'];
  if (!studyId) throw new Error('A study-scoped route must have a :studyId path parameter');
  const held = principal.assignments.filter(
    (assignment) => assignment.studyId === studyId && access.roles.includes(assignment.role),
  );
  if (held.length === 0) {
    const inStudy = principal.assignments.filter((assignment) => assignment.studyId === studyId);
    const what = inStudy.length
      ? `you hold ${describeRoles(inStudy.map((a) => a.role))} there`
      : 'you have no role in this study';
    throw AppError.forbidden(`This needs the role ${describeRoles(access.roles)} in the study; ${what}.`);
  }
  const scope: SiteScope = held.some((assignment) => assignment.siteIds === null)
    ? { allSites: true }
    : { allSites: false, siteIds: [...new Set(held.flatMap((assignment) => assignment.siteIds ?? []))] };

  const siteId = params['siteId'];
  if (siteId && !scope.allSites && !scope.siteIds.includes(siteId)) {
    throw AppError.forbidden('You are assigned to other sites of this study, not to this one.', 'site-out-of-scope');
  }
  return scope;
}

/** The role a caller acts in for a route: the first of the route's roles they hold in the study. */
export function actingRole(principal: Principal, studyId: string, roles: readonly Role[]): Role {
  const held = principal.assignments.find((assignment) => assignment.studyId === studyId && roles.includes(assignment.role));
  if (!held) throw AppError.forbidden(`This needs the role ${describeRoles(roles)} in the study.`);
  return held.role;
}

/** Whether a site is inside the caller's scope. */
export function siteInScope(scope: SiteScope, siteId: string): boolean {
  return scope.allSites || scope.siteIds.includes(siteId);
}

/** The audit actor for a study route: the user and the role they act in. */
export function studyActor(principal: Principal | undefined, studyId: string, roles: readonly Role[]): { userId: string; role: Role } {
  if (!principal) throw AppError.unauthenticated();
  return { userId: principal.user.id, role: actingRole(principal, studyId, roles) };
}
