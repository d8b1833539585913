import { inject } from '@angular/core';
import { CanActivateFn, Router } from '@angular/router';

import { AuthSession } from '../auth/auth-session';
import { APP_AREAS } from './app-areas';

/**
 * Sends `/` to the first area the user has a role for. A user with no role yet lands on the
 * forbidden page, which says so and who can grant access. Runs below `signedInGuard`.
 */
export const firstAreaGuard: CanActivateFn = async () => {
  const router = inject(Router);
  const session = inject(AuthSession);
  await session.ensureLoaded();
  const area = APP_AREAS.find((candidate) => session.hasRole(candidate.role));
  return router.createUrlTree([area ? `/${area.path}` : '/forbidden']);
};
