import { inject } from '@angular/core';
import { CanActivateFn, Router, UrlTree } from '@angular/router';

import type { Role } from '@shared/contracts/auth';
import { ApiError } from '../http/api-error';
import { AuthSession } from './auth-session';

/** Lets signed-in users through; sends everyone else to `/sign-in?returnTo=<url>`. */
export const signedInGuard: CanActivateFn = async (_route, state) => {
  const router = inject(Router);
  const signedIn = await loadSession(inject(AuthSession), router, state.url);
  if (signedIn instanceof UrlTree) return signedIn;
  return signedIn || signInTree(router, state.url);
};

/**
 * Lets through users holding at least one of `roles` in some study. Signed-in users without it
 * go to `/forbidden?from=<url>`; visitors who are not signed in go to the sign-in page.
 */
export function roleGuard(...roles: Role[]): CanActivateFn {
  return async (_route, state) => {
    const router = inject(Router);
    const session = inject(AuthSession);
    const signedIn = await loadSession(session, router, state.url);
    if (signedIn instanceof UrlTree) return signedIn;
    if (!signedIn) return signInTree(router, state.url);
    if (roles.some((role) => session.hasRole(role))) return true;
    return router.createUrlTree(['/forbidden'], { queryParams: { from: state.url } });
  };
}

/**
 * Resolves whether someone is signed in, or a sign-in URL carrying an error code when the server
 * could not say (it is down or unreachable): the sign-in page explains that in words.
 */
function loadSession(session: AuthSession, router: Router, url: string): Promise<boolean | UrlTree> {
  return session.ensureLoaded().catch((error: unknown) => {
    if (!(error instanceof ApiError)) throw error;
    return signInTree(router, url, 'session-unavailable');
  });
}

function signInTree(router: Router, returnTo: string, error?: string): UrlTree {
  return router.createUrlTree(['/sign-in'], { queryParams: error ? { returnTo, error } : { returnTo } });
}
