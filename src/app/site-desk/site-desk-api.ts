import { HttpClient, HttpEventType, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { filter, map, type Observable } from 'rxjs';
import * as z from 'zod';

import { querySchema, siteFeedbackSchema, type Query, type SiteFeedback } from '@shared/contracts/reading';
import { siteSchema, type Site } from '@shared/contracts/studies';
import {
  calibrationCheckRecordSchema,
  scheduleSchema,
  sessionCurvesSchema,
  sessionDetailSchema,
  sessionPageSchema,
  subjectSchema,
  uploadResultSchema,
  type CalibrationCheckRecord,
  type CorrectSession,
  type RegisterSession,
  type Schedule,
  type SessionCurves,
  type SessionDetail,
  type SessionListQuery,
  type SessionPage,
  type Subject,
  type UploadResult,
} from '@shared/contracts/sessions';
import { ApiError } from '../core/http/api-error';

const siteListSchema = z.array(siteSchema);
const subjectListSchema = z.array(subjectSchema);
const calibrationListSchema = z.array(calibrationCheckRecordSchema);
const queryListSchema = z.array(querySchema);

/** Body of a calibration check the coordinator enters by hand. */
export interface CalibrationCheckEntry {
  readonly deviceSerialNumber: string;
  readonly syringeVolumeL: number;
  readonly measuredVolumeL: number;
  /** ISO 8601 with offset. */
  readonly checkedAt: string;
}

/** `details` of a 422 `file-rejected` answer: the file was stored, but could not be used. */
export const fileRejectionSchema = z.object({
  uploadId: z.string(),
  sessionId: z.string(),
  reasons: z.array(z.string()),
});
export type FileRejection = z.infer<typeof fileRejectionSchema>;

/** The rejection carried by an error, when it is a 422 `file-rejected` with readable details. */
export function fileRejectionOf(error: unknown): FileRejection | null {
  if (!(error instanceof ApiError) || error.code !== 'file-rejected') return null;
  const parsed = fileRejectionSchema.safeParse(error.details);
  return parsed.success ? parsed.data : null;
}

/** Where an upload stands: bytes on their way, or the server's answer. */
export type UploadProgress =
  | { readonly kind: 'sending'; readonly loadedBytes: number; readonly totalBytes: number | null }
  | { readonly kind: 'done'; readonly result: UploadResult };

/** Typed access to the site desk API; the server limits every list to the coordinator's own sites. */
@Injectable({ providedIn: 'root' })
export class SiteDeskApi {
  private readonly http = inject(HttpClient);

  /** Sites of one study that the caller may see. */
  sitesOf(studyId: () => string | undefined): HttpResourceRef<Site[] | undefined> {
    return httpResource(() => whenKnown([studyId()], (study) => studyUrl(study, 'sites')), { parse: (body) => siteListSchema.parse(body) });
  }

  /** Visits and timepoints of the study's schedule. */
  scheduleOf(studyId: () => string | undefined): HttpResourceRef<Schedule | undefined> {
    return httpResource(() => whenKnown([studyId()], (study) => studyUrl(study, 'schedule')), { parse: (body) => scheduleSchema.parse(body) });
  }

  /** Subjects enrolled at one site. */
  subjectsOf(studyId: () => string | undefined, siteId: () => string | undefined): HttpResourceRef<Subject[] | undefined> {
    return httpResource(() => whenKnown([studyId(), siteId()], (study, site) => siteUrl(study, site, 'subjects')), {
      parse: (body) => subjectListSchema.parse(body),
    });
  }

  /** One page of sessions; the server filters, sorts and pages. */
  sessionsOf(studyId: () => string | undefined, query: () => SessionListQuery): HttpResourceRef<SessionPage | undefined> {
    return httpResource(
      () => {
        const url = whenKnown([studyId()], (study) => studyUrl(study, 'sessions'));
        return url ? { url, params: queryParams(query()) } : undefined;
      },
      { parse: (body) => sessionPageSchema.parse(body) },
    );
  }

  /** One session with its registration, files and the engine's checks. */
  sessionDetail(studyId: () => string | undefined, sessionId: () => string | undefined): HttpResourceRef<SessionDetail | undefined> {
    return httpResource(() => whenKnown([studyId(), sessionId()], (study, session) => sessionUrl(study, session)), { parse: (body) => sessionDetailSchema.parse(body) });
  }

  /** Ready-to-plot curves of every effort; ask only once the session has efforts. */
  sessionCurves(studyId: () => string | undefined, sessionId: () => string | undefined): HttpResourceRef<SessionCurves | undefined> {
    return httpResource(
      () => whenKnown([studyId(), sessionId()], (study, session) => sessionUrl(study, session, '/curves')),
      { parse: (body) => sessionCurvesSchema.parse(body) },
    );
  }

  /** Calibration checks of one site, newest first as the server keeps them. */
  calibrationChecksOf(
    studyId: () => string | undefined,
    siteId: () => string | undefined,
  ): HttpResourceRef<CalibrationCheckRecord[] | undefined> {
    return httpResource(() => whenKnown([studyId(), siteId()], (study, site) => siteUrl(study, site, 'calibration-checks')), {
      parse: (body) => calibrationListSchema.parse(body),
    });
  }

  /** Enrols a subject at a site under a pseudonymous code. */
  enrolSubject(studyId: string, siteId: string, code: string): Observable<Subject> {
    return this.http
      .post<unknown>(siteUrl(studyId, siteId, 'subjects'), { code })
      .pipe(map((body) => subjectSchema.parse(body)));
  }

  /** Registers a session at a site, before its file arrives. */
  registerSession(studyId: string, siteId: string, registration: RegisterSession): Observable<SessionDetail> {
    return this.http
      .post<unknown>(siteUrl(studyId, siteId, 'sessions'), registration)
      .pipe(map((body) => sessionDetailSchema.parse(body)));
  }

  /** Corrects registration data; once a file exists the server asks for a reason. */
  correctSession(studyId: string, sessionId: string, correction: CorrectSession): Observable<SessionDetail> {
    return this.http
      .patch<unknown>(sessionUrl(studyId, sessionId), correction)
      .pipe(map((body) => sessionDetailSchema.parse(body)));
  }

  /**
   * Sends the session's one file (a CSV, a ZIP of effort CSVs, or a session JSON) and reports
   * progress. Fails with an ApiError: 422 `file-rejected` (stored, see {@link fileRejectionOf}),
   * 409 `duplicate-file` / `locked` / `session-has-file`, 413 `file-too-large`.
   */
  uploadFile(studyId: string, sessionId: string, file: File): Observable<UploadProgress> {
    const form = new FormData();
    form.append('file', file, file.name);
    return this.http
      .post<unknown>(sessionUrl(studyId, sessionId, '/uploads'), form, { reportProgress: true, observe: 'events' })
      .pipe(
        map((event): UploadProgress | null => {
          if (event.type === HttpEventType.UploadProgress) {
            return { kind: 'sending', loadedBytes: event.loaded, totalBytes: event.total ?? null };
          }
          if (event.type === HttpEventType.Response) {
            return { kind: 'done', result: uploadResultSchema.parse(event.body) };
          }
          return null;
        }),
        filter((progress): progress is UploadProgress => progress !== null),
      );
  }

  /** Reads a stored file again (after the engine or protocol changed); may fail as a 422 upload does. */
  reprocessUpload(studyId: string, sessionId: string, uploadId: string): Observable<UploadResult> {
    return this.http
      .post<unknown>(sessionUrl(studyId, sessionId, `/uploads/${encodeURIComponent(uploadId)}/reprocess`), null)
      .pipe(map((body) => uploadResultSchema.parse(body)));
  }

  /** Adds a hand-entered calibration check; the server works out the error and tolerance. */
  addCalibrationCheck(studyId: string, siteId: string, entry: CalibrationCheckEntry): Observable<CalibrationCheckRecord> {
    return this.http
      .post<unknown>(siteUrl(studyId, siteId, 'calibration-checks'), entry)
      .pipe(map((body) => calibrationCheckRecordSchema.parse(body)));
  }

  /** The over-read feedback of a session; ask only once the session is final (404 before). */
  sessionFeedback(studyId: () => string | undefined, sessionId: () => string | undefined): HttpResourceRef<SiteFeedback | undefined> {
    return httpResource(() => whenKnown([studyId(), sessionId()], (study, session) => sessionUrl(study, session, '/feedback')), {
      parse: (body) => siteFeedbackSchema.parse(body),
    });
  }

  /** Link to the feedback as a PDF report; the browser downloads it with the session cookie. */
  feedbackPdfUrl(studyId: string, sessionId: string): string {
    return sessionUrl(studyId, sessionId, '/feedback.pdf');
  }

  /** Queries on one session with their threads; the reader is named only as "Over-reader". */
  sessionQueries(studyId: () => string | undefined, sessionId: () => string | undefined): HttpResourceRef<Query[] | undefined> {
    return httpResource(() => whenKnown([studyId(), sessionId()], (study, session) => sessionUrl(study, session, '/queries')), {
      parse: (body) => queryListSchema.parse(body),
    });
  }

  /** Queries of the study in the coordinator's sites that wait for the site (status open). */
  openQueries(studyId: () => string | undefined): HttpResourceRef<Query[] | undefined> {
    return httpResource(
      () => {
        const url = whenKnown([studyId()], (study) => studyUrl(study, 'queries'));
        return url ? { url, params: { status: 'open' } } : undefined;
      },
      { parse: (body) => queryListSchema.parse(body) },
    );
  }

  /** Answers a query; it becomes `answered`. Fails 409 `locked` or `query-closed`. */
  answerQuery(studyId: string, queryId: string, body: string): Observable<Query> {
    return this.http
      .post<unknown>(studyUrl(studyId, `queries/${encodeURIComponent(queryId)}/answers`), { body })
      .pipe(map((answer) => querySchema.parse(answer)));
  }

  /** Link to the file exactly as it was received; the browser downloads it with the session cookie. */
  originalFileUrl(studyId: string, sessionId: string, uploadId: string): string {
    return sessionUrl(studyId, sessionId, `/uploads/${encodeURIComponent(uploadId)}/original`);
  }
}

function studyUrl(studyId: string, rest: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/${rest}`;
}

function siteUrl(studyId: string, siteId: string, rest: string): string {
  return studyUrl(studyId, `sites/${encodeURIComponent(siteId)}/${rest}`);
}

function sessionUrl(studyId: string, sessionId: string, rest = ''): string {
  return studyUrl(studyId, `sessions/${encodeURIComponent(sessionId)}${rest}`);
}

/** A resource URL once every id it needs is known; `undefined` keeps the resource idle. */
function whenKnown<T extends readonly (string | undefined)[]>(
  ids: T,
  url: (...known: { [K in keyof T]: string }) => string,
): string | undefined {
  return ids.every((id) => !!id) ? url(...(ids as { [K in keyof T]: string })) : undefined;
}

/** Query parameters without the empty ones, so the server applies its own defaults. */
function queryParams(query: SessionListQuery): Record<string, string | number> {
  const params: Record<string, string | number> = {};
  for (const [name, value] of Object.entries(query)) {
    if (value === undefined || value === null || value === '') continue;
    params[name] = typeof value === 'number' ? value : String(value);
  }
  return params;
}
