import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';
import * as z from 'zod';

import { querySchema, type Query } from '@shared/contracts/reading';
import { sessionPageSchema, type SessionPage } from '@shared/contracts/sessions';

const queryListSchema = z.array(querySchema);

/** A query's status, or every status. */
export type QueryStatusFilter = Query['status'] | 'all';

/** What a data manager asks a site. */
export interface NewQuery {
  readonly question: string;
  /** Whether the site is asked to repeat the test within the visit window. */
  readonly requestRepeat: boolean;
}

/** Typed access to the data office's API: queries of a study and the sessions they are about. */
@Injectable({ providedIn: 'root' })
export class DataOfficeApi {
  private readonly http = inject(HttpClient);

  /** Queries of the study, newest first, of one status or all. */
  queriesOf(studyId: () => string | undefined, status: () => QueryStatusFilter): HttpResourceRef<Query[] | undefined> {
    return httpResource(
      () => {
        const study = studyId();
        if (!study) return undefined;
        const filter = status();
        const params: Record<string, string> = filter === 'all' ? {} : { status: filter };
        return { url: studyUrl(study, 'queries'), params };
      },
      { parse: (body) => queryListSchema.parse(body) },
    );
  }

  /** Sessions of one subject (by its code), to choose the one a query is about. */
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

  /** Opens a query to the site on a session. Fails 409 `locked` on locked data. */
  openQuery(studyId: string, sessionId: string, query: NewQuery): Observable<Query> {
    return this.http
      .post<unknown>(studyUrl(studyId, `sessions/${encodeURIComponent(sessionId)}/queries`), query)
      .pipe(map((body) => querySchema.parse(body)));
  }

  /** Writes again on a query; it is open again for the site. */
  followUp(studyId: string, queryId: string, body: string): Observable<Query> {
    return this.http
      .post<unknown>(studyUrl(studyId, `queries/${encodeURIComponent(queryId)}/messages`), { body })
      .pipe(map((answer) => querySchema.parse(answer)));
  }

  /** Closes a query. Fails 409 `query-closed` when it already is. */
  closeQuery(studyId: string, queryId: string): Observable<Query> {
    return this.http
      .post<unknown>(studyUrl(studyId, `queries/${encodeURIComponent(queryId)}/close`), null)
      .pipe(map((answer) => querySchema.parse(answer)));
  }
}

function studyUrl(studyId: string, rest: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/${rest}`;
}
