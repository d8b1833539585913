import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';

import {
  releaseAcceptedSchema,
  releaseDetailSchema,
  releaseListSchema,
  releaseProgressSchema,
  type ReleaseAccepted,
  type ReleaseDetail,
  type ReleaseProgress,
  type ReleaseRequest,
  type ReleaseSummary,
} from '@shared/contracts/releases';

/**
 * Typed access to locked dataset releases: the study's releases, asking for one (signed), the
 * progress of its build, a release with its manifest and verification, and its files' addresses.
 */
@Injectable({ providedIn: 'root' })
export class DataOfficeReleasesApi {
  private readonly http = inject(HttpClient);

  /** The study's releases, newest first. */
  releasesOf(studyId: () => string | undefined): HttpResourceRef<ReleaseSummary[] | undefined> {
    return httpResource(
      () => {
        const study = studyId();
        return study ? releasesUrl(study) : undefined;
      },
      { parse: (body) => releaseListSchema.parse(body) },
    );
  }

  /** One release with its stored manifest and the server's verification of it, made at each read. */
  releaseOf(studyId: () => string | undefined, releaseId: () => string | undefined): HttpResourceRef<ReleaseDetail | undefined> {
    return httpResource(
      () => {
        const study = studyId();
        const release = releaseId();
        return study && release ? releaseUrl(study, release) : undefined;
      },
      { parse: (body) => releaseDetailSchema.parse(body) },
    );
  }

  /**
   * Asks for a release and signs its order (meaning "released"). Fails with 401
   * `reauthentication-required` (see `needsReauthentication`), 409 `not-locked` naming the sessions
   * in the way, `nothing-to-release` or `release-running`.
   */
  request(studyId: string, request: ReleaseRequest): Observable<ReleaseAccepted> {
    return this.http.post<unknown>(releasesUrl(studyId), request).pipe(map((body) => releaseAcceptedSchema.parse(body)));
  }

  /** Where the release's build stands. */
  progress(studyId: string, releaseId: string): Observable<ReleaseProgress> {
    return this.http
      .get<unknown>(`${releaseUrl(studyId, releaseId)}/progress`)
      .pipe(map((body) => releaseProgressSchema.parse(body)));
  }

  /** The address a file of the release (or `manifest.json`) downloads from; the server checks it against the manifest first. */
  fileUrl(studyId: string, releaseId: string, fileName: string): string {
    return `${releaseUrl(studyId, releaseId)}/files/${encodeURIComponent(fileName)}`;
  }
}

function releasesUrl(studyId: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/releases`;
}

function releaseUrl(studyId: string, releaseId: string): string {
  return `${releasesUrl(studyId)}/${encodeURIComponent(releaseId)}`;
}
