import { HttpClient, HttpErrorResponse } from '@angular/common/http';
import { Injectable, computed, inject, signal } from '@angular/core';
import { firstValueFrom } from 'rxjs';

import { meResponseSchema, type MeResponse, type Role, type RoleAssignment } from '@shared/contracts/auth';
import { ApiError } from '../http/api-error';

/** Where the session stands: not asked yet, signed in, or known to be signed out. */
export type SessionStatus = 'unknown' | 'signed-in' | 'signed-out';

/**
 * The signed-in user, their role assignments and the CSRF token, as `GET /api/me` reports them.
 * Guards call {@link ensureLoaded}; everything else reads the signals.
 */
@Injectable({ providedIn: 'root' })
export class AuthSession {
  private readonly http = inject(HttpClient);
  private readonly me = signal<MeResponse | null>(null);
  private readonly statusState = signal<SessionStatus>('unknown');
  private pendingLoad: Promise<boolean> | null = null;

  readonly status = this.statusState.asReadonly();
  readonly user = computed(() => this.me()?.user ?? null);
  readonly assignments = computed<readonly RoleAssignment[]>(() => this.me()?.assignments ?? []);
  /** Every role the user holds in at least one study. */
  readonly roles = computed<ReadonlySet<Role>>(() => new Set(this.assignments().map((a) => a.role)));
  /** Token to send in the CSRF header on writes; null when signed out. */
  readonly csrfToken = computed(() => this.me()?.csrfToken ?? null);
  /** Whether a user is signed in. */
  readonly isSignedIn = computed(() => this.statusState() === 'signed-in');

  /** Whether the user holds `role` in at least one study. */
  hasRole(role: Role): boolean {
    return this.roles().has(role);
  }

  /** The user's assignments with `role`, one per study. */
  assignmentsFor(role: Role): RoleAssignment[] {
    return this.assignments().filter((a) => a.role === role);
  }

  /**
   * Loads `/api/me` once and resolves whether someone is signed in. Concurrent callers share one
   * request. Rejects with an {@link ApiError} when the server fails for another reason than 401.
   */
  ensureLoaded(): Promise<boolean> {
    if (this.statusState() !== 'unknown') return Promise.resolve(this.isSignedIn());
    this.pendingLoad ??= this.reload().finally(() => (this.pendingLoad = null));
    return this.pendingLoad;
  }

  /** Asks the server again (after a role change, say) and resolves whether someone is signed in. */
  async reload(): Promise<boolean> {
    let body: unknown;
    try {
      body = await firstValueFrom(this.http.get<unknown>('/api/me'));
    } catch (error: unknown) {
      // 401 is the expected answer for a visitor who has not signed in; anything else propagates.
      if (httpStatusOf(error) !== 401) throw error;
      this.clear();
      return false;
    }
    this.me.set(meResponseSchema.parse(body));
    this.statusState.set('signed-in');
    return true;
  }

  /** Ends the server session (`POST /auth/logout`, CSRF header added by the interceptor). */
  async signOut(): Promise<void> {
    await firstValueFrom(this.http.post('/auth/logout', null, { responseType: 'text' }));
    this.clear();
  }

  private clear(): void {
    this.me.set(null);
    this.statusState.set('signed-out');
  }
}

function httpStatusOf(error: unknown): number | undefined {
  return error instanceof ApiError || error instanceof HttpErrorResponse ? error.status : undefined;
}
