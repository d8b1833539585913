import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';
import * as z from 'zod';

import type { Role } from '@shared/contracts/auth';
import { scheduleSchema, type Schedule } from '@shared/contracts/sessions';
import {
  personSchema,
  studySetupSchema,
  type AddPerson,
  type CreateStudy,
  type Person,
  type ScheduleUpdate,
  type SiteInput,
  type StudySetup,
  type StudySetupUpdate,
} from '@shared/contracts/setup';
import { siteSchema, studySummarySchema, type Site, type StudySummary } from '@shared/contracts/studies';

const studyListSchema = z.array(studySummarySchema);
const siteListSchema = z.array(siteSchema);
const peopleSchema = z.array(personSchema);

/**
 * Typed access to the study-setup API. Reads are resources parsed with the shared schemas; writes
 * take an optional `reason`, which the server requires once the study has sessions.
 */
@Injectable({ providedIn: 'root' })
export class SetupApi {
  private readonly http = inject(HttpClient);

  /** Studies in which the caller holds any role (the page keeps those they administer). */
  studies(): HttpResourceRef<StudySummary[] | undefined> {
    return httpResource(() => '/api/studies', { parse: (body) => studyListSchema.parse(body) });
  }

  setupOf(studyId: () => string | undefined): HttpResourceRef<StudySetup | undefined> {
    return httpResource(() => whenKnown(studyId(), 'setup'), { parse: (body) => studySetupSchema.parse(body) });
  }

  scheduleOf(studyId: () => string | undefined): HttpResourceRef<Schedule | undefined> {
    return httpResource(() => whenKnown(studyId(), 'schedule'), { parse: (body) => scheduleSchema.parse(body) });
  }

  sitesOf(studyId: () => string | undefined): HttpResourceRef<Site[] | undefined> {
    return httpResource(() => whenKnown(studyId(), 'sites'), { parse: (body) => siteListSchema.parse(body) });
  }

  peopleOf(studyId: () => string | undefined): HttpResourceRef<Person[] | undefined> {
    return httpResource(() => whenKnown(studyId(), 'people'), { parse: (body) => peopleSchema.parse(body) });
  }

  /** Creates a study; the caller becomes its study admin. */
  createStudy(study: CreateStudy): Observable<StudySetup> {
    return this.http.post<unknown>('/api/studies', study).pipe(map((body) => studySetupSchema.parse(body)));
  }

  updateSetup(studyId: string, setup: StudySetupUpdate): Observable<StudySetup> {
    return this.http.put<unknown>(studyUrl(studyId, 'setup'), setup).pipe(map((body) => studySetupSchema.parse(body)));
  }

  updateSchedule(studyId: string, schedule: ScheduleUpdate): Observable<Schedule> {
    return this.http.put<unknown>(studyUrl(studyId, 'schedule'), schedule).pipe(map((body) => scheduleSchema.parse(body)));
  }

  addSite(studyId: string, site: SiteInput): Observable<Site> {
    return this.http.post<unknown>(studyUrl(studyId, 'sites'), site).pipe(map((body) => siteSchema.parse(body)));
  }

  updateSite(studyId: string, siteId: string, site: SiteInput): Observable<Site> {
    return this.http
      .put<unknown>(studyUrl(studyId, `sites/${encodeURIComponent(siteId)}`), site)
      .pipe(map((body) => siteSchema.parse(body)));
  }

  /** Removes a site that holds no subjects, sessions or calibration checks. */
  removeSite(studyId: string, siteId: string, reason?: string): Observable<void> {
    return this.http
      .delete(studyUrl(studyId, `sites/${encodeURIComponent(siteId)}`), { body: { reason } })
      .pipe(map(() => undefined));
  }

  /** Gives a person a role; the server creates the account if new and e-mails an invitation. */
  addPerson(studyId: string, person: AddPerson): Observable<Person> {
    return this.http.post<unknown>(studyUrl(studyId, 'people'), person).pipe(map((body) => personSchema.parse(body)));
  }

  removeRole(studyId: string, userId: string, role: Role, reason?: string): Observable<void> {
    return this.http
      .delete(studyUrl(studyId, `people/${encodeURIComponent(userId)}/roles/${role}`), { body: { reason } })
      .pipe(map(() => undefined));
  }

  /** Deactivates an account for good (it is kept, for the audit trail); a reason is always required. */
  deactivate(studyId: string, userId: string, reason: string): Observable<Person> {
    return this.http
      .post<unknown>(studyUrl(studyId, `people/${encodeURIComponent(userId)}/deactivate`), { reason })
      .pipe(map((body) => personSchema.parse(body)));
  }
}

function studyUrl(studyId: string, rest: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/${rest}`;
}

/** The URL once the study is known; `undefined` keeps the resource idle. */
function whenKnown(studyId: string | undefined, rest: string): string | undefined {
  return studyId ? studyUrl(studyId, rest) : undefined;
}
