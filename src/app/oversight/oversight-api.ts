import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';

import {
  auditFilterOptionsSchema,
  auditPageSchema,
  chainVerificationResultSchema,
  readerPerformanceReportSchema,
  sitePerformanceReportSchema,
  type AuditFilterOptions,
  type AuditPage,
  type AuditQuery,
  type ChainVerificationResult,
  type ReaderPerformanceReport,
  type SitePerformanceReport,
} from '@shared/contracts/oversight';

/**
 * Typed access to the monitor's view: the audit trail, chain verification and the performance
 * dashboards. Reads are resources parsed with the shared schemas; verification is the one write.
 */
@Injectable({ providedIn: 'root' })
export class OversightApi {
  private readonly http = inject(HttpClient);

  /** One page of the study's audit trail for the given filters. */
  auditPage(studyId: () => string | undefined, query: () => AuditQuery): HttpResourceRef<AuditPage | undefined> {
    return httpResource(
      () => {
        const id = studyId();
        return id ? { url: studyUrl(id, 'audit'), params: queryParams(query()) } : undefined;
      },
      { parse: (body) => auditPageSchema.parse(body) },
    );
  }

  /** Sites, people, entities and actions present in the trail, for the filter fields. */
  auditFilterOptions(studyId: () => string | undefined): HttpResourceRef<AuditFilterOptions | undefined> {
    return httpResource(() => whenKnown(studyId(), 'audit/filter-options'), { parse: (body) => auditFilterOptionsSchema.parse(body) });
  }

  /** Walks the whole audit chain now; the server records that you did. */
  verifyChain(studyId: string): Observable<ChainVerificationResult> {
    return this.http.post<unknown>(studyUrl(studyId, 'audit/verify'), null).pipe(map((body) => chainVerificationResultSchema.parse(body)));
  }

  sitePerformance(studyId: () => string | undefined): HttpResourceRef<SitePerformanceReport | undefined> {
    return httpResource(() => whenKnown(studyId(), 'performance/sites'), { parse: (body) => sitePerformanceReportSchema.parse(body) });
  }

  readerPerformance(studyId: () => string | undefined): HttpResourceRef<ReaderPerformanceReport | undefined> {
    return httpResource(() => whenKnown(studyId(), 'performance/readers'), {
      parse: (body) => readerPerformanceReportSchema.parse(body),
    });
  }

  /** Link to both dashboards as xlsx; the browser downloads it with the session cookie. */
  performanceExportUrl(studyId: string): string {
    return studyUrl(studyId, 'performance/export.xlsx');
  }
}

function studyUrl(studyId: string, rest: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/${rest}`;
}

/** The URL once the study is known; `undefined` keeps the resource idle. */
function whenKnown(studyId: string | undefined, rest: string): string | undefined {
  return studyId ? studyUrl(studyId, rest) : undefined;
}

/** Query parameters without the empty ones, so the server applies its own defaults. */
function queryParams(query: AuditQuery): Record<string, string | number> {
  const params: Record<string, string | number> = {};
  for (const [name, value] of Object.entries(query)) {
    if (value === undefined || value === null || value === '') continue;
    params[name] = typeof value === 'number' ? value : String(value);
  }
  return params;
}
