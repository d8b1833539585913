import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';
import * as z from 'zod';

import { lockListSchema, lockViewSchema, type CreateLock, type LockList, type LockView } from '@shared/contracts/locks';
import { scheduleSchema, sessionPageSchema, type Schedule, type SessionPage } from '@shared/contracts/sessions';
import { siteSchema, type Site } from '@shared/contracts/studies';
import { ApiError } from '../core/http/api-error';
import { safeReturnPath } from '../sign-in/return-path';

const siteListSchema = z.array(siteSchema);

/** Whether the server asks for a fresh password entry before it signs (21 CFR 11.200). */
export function needsReauthentication(error: unknown): boolean {
  return error instanceof ApiError && error.status === 401 && error.code === 'reauthentication-required';
}

/**
 * The server route that forces a fresh sign-in at the identity provider and comes back to
 * `returnTo` (an in-app path) with `reauthentication=<outcome>` added.
 */
export function reauthenticateUrl(returnTo: string): string {
  return `/auth/reauthenticate?returnTo=${encodeURIComponent(safeReturnPath(returnTo))}`;
}

/**
 * Typed access to data locks: the study's locks with their signatures, locking and unlocking, and
 * the sites, visits and sessions a lock can name.
 */
@Injectable({ providedIn: 'root' })
export class DataOfficeLocksApi {
  private readonly http = inject(HttpClient);

  /** Active and past locks of the study, newest first, each with its signature manifestations. */
  locksOf(studyId: () => string | undefined): HttpResourceRef<LockList | undefined> {
    return httpResource(() => whenKnown(studyId(), 'locks'), { parse: (body) => lockListSchema.parse(body) });
  }

  sitesOf(studyId: () => string | undefined): HttpResourceRef<Site[] | undefined> {
    return httpResource(() => whenKnown(studyId(), 'sites'), { parse: (body) => siteListSchema.parse(body) });
  }

  scheduleOf(studyId: () => string | undefined): HttpResourceRef<Schedule | undefined> {
    return httpResource(() => whenKnown(studyId(), 'schedule'), { parse: (body) => scheduleSchema.parse(body) });
  }

  /** Sessions of one subject (by code), to choose the one to lock. */
  sessionsOfSubject(studyId: () => string | undefined, subjectCode: () => string | undefined): HttpResourceRef<SessionPage | undefined> {
    return httpResource(
      () => {
        const study = studyId();
        const code = subjectCode()?.trim();
        if (!study || !code) return undefined;
        return { url: studyUrl(study, 'sessions'), params: { subjectCode: code, sort: 'testedAt', direction: 'asc', pageSize: 200 } };
      },
      { parse: (body) => sessionPageSchema.parse(body) },
    );
  }

  /**
   * Locks and signs (meaning "locked"). Fails with 401 `reauthentication-required` (see
   * {@link needsReauthentication}), 409 `open-queries` or `lock-exists`, 422 `lock-target-unknown`.
   */
  lock(studyId: string, lock: CreateLock): Observable<LockView> {
    return this.http.post<unknown>(studyUrl(studyId, 'locks'), lock).pipe(map((body) => lockViewSchema.parse(body)));
  }

  /** Unlocks with a reason and signs (meaning "unlocked"); fails like {@link lock}. */
  unlock(studyId: string, lockId: string, reason: string): Observable<LockView> {
    return this.http
      .post<unknown>(studyUrl(studyId, `locks/${encodeURIComponent(lockId)}/unlock`), { reason })
      .pipe(map((body) => lockViewSchema.parse(body)));
  }
}

function studyUrl(studyId: string, rest: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/${rest}`;
}

function whenKnown(studyId: string | undefined, rest: string): string | undefined {
  return studyId ? studyUrl(studyId, rest) : undefined;
}
