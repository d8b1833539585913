import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';
import * as z from 'zod';

import {
  referenceSetRefusalSchema,
  referenceSetSchema,
  referenceSetValidationSchema,
  studyReferenceSetSchema,
  type ImportableEquationsId,
  type ReferenceSet,
  type ReferenceSetRefusal,
  type ReferenceSetValidation,
  type StudyReferenceSet,
} from '@shared/contracts/reference-sets';
import { ApiError } from '../core/http/api-error';

const referenceSetListSchema = z.array(referenceSetSchema);

/** The refusal carried by an error, when it is a 422 `reference-set-invalid` with readable details. */
export function referenceSetRefusalOf(error: unknown): ReferenceSetRefusal | null {
  if (!(error instanceof ApiError) || error.code !== 'reference-set-invalid') return null;
  const parsed = referenceSetRefusalSchema.safeParse(error.details);
  return parsed.success ? parsed.data : null;
}

/** Typed access to reference sets: importing the publisher's files and pinning one to a study. */
@Injectable({ providedIn: 'root' })
export class SetupReferenceSetsApi {
  private readonly http = inject(HttpClient);

  /** Every imported set, newest first. */
  referenceSets(): HttpResourceRef<ReferenceSet[] | undefined> {
    return httpResource(() => '/api/reference-sets', { parse: (body) => referenceSetListSchema.parse(body) });
  }

  /** What was checked when a set was imported. */
  validationOf(referenceSetId: () => string | undefined): HttpResourceRef<ReferenceSetValidation | undefined> {
    return httpResource(
      () => {
        const id = referenceSetId();
        return id ? `/api/reference-sets/${encodeURIComponent(id)}/validation` : undefined;
      },
      { parse: (body) => referenceSetValidationSchema.parse(body) },
    );
  }

  /** Which equations a study uses and whether a change needs a reason. */
  studyReferenceSet(studyId: () => string | undefined): HttpResourceRef<StudyReferenceSet | undefined> {
    return httpResource(
      () => {
        const id = studyId();
        return id ? studyUrl(id) : undefined;
      },
      { parse: (body) => studyReferenceSetSchema.parse(body) },
    );
  }

  /**
   * Sends the publisher's file. Fails with an ApiError: 422 `reference-set-invalid` (nothing kept,
   * see {@link referenceSetRefusalOf}), 409 `duplicate-reference-set`, 403, 413 `file-too-large`.
   */
  importReferenceSet(file: File, equationsId: ImportableEquationsId, label: string): Observable<ReferenceSet> {
    const form = new FormData();
    form.append('equationsId', equationsId);
    if (label.trim()) form.append('label', label.trim());
    form.append('file', file, file.name);
    return this.http.post<unknown>('/api/reference-sets', form).pipe(map((body) => referenceSetSchema.parse(body)));
  }

  /** Pins a set to a study (null: the built-in ECSC/ERS 1993 only); a reason once the study has sessions. */
  pin(studyId: string, referenceSetId: string | null, reason?: string): Observable<StudyReferenceSet> {
    return this.http
      .put<unknown>(studyUrl(studyId), { referenceSetId, ...(reason ? { reason } : {}) })
      .pipe(map((body) => studyReferenceSetSchema.parse(body)));
  }
}

function studyUrl(studyId: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/reference-set`;
}
