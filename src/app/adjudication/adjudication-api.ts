import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';

import { adjudicationViewSchema, queuePageSchema, type AdjudicationView, type QueuePage } from '@shared/contracts/reading';
import { whenKnown } from '../reading/reading-api';

/**
 * Typed access to adjudication. The adjudication read itself is saved, released and signed
 * through the reading room's read routes (see ReadingApi).
 */
@Injectable({ providedIn: 'root' })
export class AdjudicationApi {
  private readonly http = inject(HttpClient);

  /** Sessions whose two reads disagree, waiting for an adjudicator, oldest due first. */
  queue(studyId: () => string | undefined): HttpResourceRef<QueuePage | undefined> {
    return httpResource(() => whenKnown([studyId()], (study) => studyUrl(study, 'adjudication/queue')), {
      parse: (body) => queuePageSchema.parse(body),
    });
  }

  /** The adjudicator's read beside the two reads it settles. */
  view(studyId: () => string | undefined, readId: () => string | undefined): HttpResourceRef<AdjudicationView | undefined> {
    return httpResource(() => whenKnown([studyId(), readId()], (study, read) => studyUrl(study, `adjudications/${encodeURIComponent(read)}`)), {
      parse: (body) => adjudicationViewSchema.parse(body),
    });
  }

  /** Claims a session to adjudicate; fails with 409 when another adjudicator took it first. */
  claim(studyId: string, queueToken: string): Observable<AdjudicationView> {
    return this.http
      .post<unknown>(studyUrl(studyId, 'adjudication/claims'), { queueToken })
      .pipe(map((body) => adjudicationViewSchema.parse(body)));
  }
}

function studyUrl(studyId: string, rest: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/${rest}`;
}
