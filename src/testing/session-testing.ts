import { HttpTestingController } from '@angular/common/http/testing';
import { TestBed } from '@angular/core/testing';

import type { MeResponse, Role, RoleAssignment } from '@shared/contracts/auth';
import { AuthSession } from '../app/core/auth/auth-session';

/** A fictional `/api/me` answer holding the given roles, one fictional study per role. */
export function meWithRoles(roles: readonly Role[], csrfToken = 'csrf-test-token'): MeResponse {
  const assignments: RoleAssignment[] = roles.map((role, index) => ({
    studyId: `study-${index + 1}`,
    studyCode: `TM-DEMO-${index + 1}`,
    role,
    siteIds: role === 'site-coordinator' ? ['site-101', 'site-102'] : null,
  }));
  return {
    user: { id: 'user-1', email: 'wren.halloway@example.org', name: 'Wren Halloway' },
    assignments,
    csrfToken,
  };
}

/**
 * Loads the real {@link AuthSession} through the HTTP testing backend: answers `GET /api/me`
 * with `me`, or with 401 when `me` is null.
 */
export async function loadSession(me: MeResponse | null): Promise<AuthSession> {
  const session = TestBed.inject(AuthSession);
  const loaded = session.ensureLoaded();
  answerMe(me);
  await loaded;
  return session;
}

/** Answers the pending `GET /api/me` with `me`, or with 401 when `me` is null. */
export function answerMe(me: MeResponse | null): void {
  const request = TestBed.inject(HttpTestingController).expectOne('/api/me');
  if (me) {
    request.flush(me);
  } else {
    request.flush(
      { error: { code: 'unauthenticated', message: 'Sign in to continue.' } },
      { status: 401, statusText: 'Unauthorized' },
    );
  }
}
