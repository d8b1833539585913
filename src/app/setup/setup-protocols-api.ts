import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';
import * as z from 'zod';

import {
  replayResultSchema,
  ruleSetComparisonSchema,
  ruleSetDetailSchema,
  ruleSetSummarySchema,
  type ReplayResult,
  type RuleSetComparison,
  type RuleSetDetail,
  type RuleSetSummary,
} from '@shared/contracts/protocols';

const ruleSetListSchema = z.array(ruleSetSummarySchema);

/** Typed access to the rule-set catalogue and to replays of a study under another rule set. */
@Injectable({ providedIn: 'root' })
export class SetupProtocolsApi {
  private readonly http = inject(HttpClient);

  /** Every rule-set file; those that fail validation carry their problem. */
  ruleSets(): HttpResourceRef<RuleSetSummary[] | undefined> {
    return httpResource(() => '/api/protocols', { parse: (body) => ruleSetListSchema.parse(body) });
  }

  /** One version with every rule; idle until both id and version are known. */
  ruleSet(id: () => string | undefined, version: () => number | undefined): HttpResourceRef<RuleSetDetail | undefined> {
    return httpResource(
      () => {
        const known = id();
        const number = version();
        return known && number ? `/api/protocols/${encodeURIComponent(known)}/versions/${number}` : undefined;
      },
      { parse: (body) => ruleSetDetailSchema.parse(body) },
    );
  }

  /** Two versions (`<id>@<version>`) rule by rule; idle until both are chosen. */
  comparison(from: () => string | undefined, to: () => string | undefined): HttpResourceRef<RuleSetComparison | undefined> {
    return httpResource(
      () => {
        const before = from();
        const after = to();
        return before && after ? { url: '/api/protocols/compare', params: { from: before, to: after } } : undefined;
      },
      { parse: (body) => ruleSetComparisonSchema.parse(body) },
    );
  }

  /** Runs a replay of the study under `ruleSet` (`<id>@<version>`); nothing in the study changes. */
  replay(studyId: string, ruleSet: string): Observable<ReplayResult> {
    return this.http
      .post<unknown>(`/api/studies/${encodeURIComponent(studyId)}/replays`, { ruleSet })
      .pipe(map((body) => replayResultSchema.parse(body)));
  }

  /** Link to the replay's change list as CSV; the browser downloads it with the session cookie. */
  replayCsvUrl(studyId: string, replayId: string): string {
    return `/api/studies/${encodeURIComponent(studyId)}/replays/${encodeURIComponent(replayId)}.csv`;
  }
}
