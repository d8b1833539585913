import { HttpClient, httpResource, type HttpResourceRef } from '@angular/common/http';
import { Injectable, inject } from '@angular/core';
import { map, type Observable } from 'rxjs';
import * as z from 'zod';

import {
  myReadSchema,
  querySchema,
  queuePageSchema,
  readWorkspaceSchema,
  type Query,
  type QueuePage,
  type ReadWorkspace,
  type SaveRead,
} from '@shared/contracts/reading';
import { sessionCurvesSchema, type SessionCurves } from '@shared/contracts/sessions';
import { ApiError } from '../core/http/api-error';
import { safeReturnPath } from '../sign-in/return-path';

/** A read in the reader's own list (in progress, withdrawn or signed). */
export type MyRead = z.infer<typeof myReadSchema>;
const myReadListSchema = z.array(myReadSchema);
const queryListSchema = z.array(querySchema);

/** One entry of the finding catalogue (`GET /api/formats/finding-codes`). */
export const findingDescriptionSchema = z.object({
  code: z.string(),
  title: z.string(),
  explanation: z.string(),
  affects: z.array(z.enum(['fev1', 'fvc'])),
  costs: z.enum(['acceptable', 'acceptable-and-usable', 'none']),
  source: z.string(),
  status: z.string(),
  sessionLevel: z.boolean(),
});
export type FindingDescription = z.infer<typeof findingDescriptionSchema>;
const findingCatalogueSchema = z.array(findingDescriptionSchema);

/**
 * `details` of a 409 `stale-read`: someone (or another tab) saved the read after this form was
 * loaded. `changed` says what, in words where the server gives words.
 */
export const staleReadDetailsSchema = z.object({
  currentVersion: z.number().int(),
  changed: z.array(z.unknown()).default([]),
});
export interface StaleRead {
  readonly currentVersion: number;
  /** What changed since this form was loaded, in words. */
  readonly changed: readonly string[];
}

/** The stale-read conflict carried by an error, when it is a 409 `stale-read` with readable details. */
export function staleReadOf(error: unknown): StaleRead | null {
  if (!(error instanceof ApiError) || error.status !== 409 || error.code !== 'stale-read') return null;
  const parsed = staleReadDetailsSchema.safeParse(error.details);
  return parsed.success ? { currentVersion: parsed.data.currentVersion, changed: parsed.data.changed.map(changeText) } : null;
}

/** Whether the server asks for a fresh sign-in before a signature (21 CFR 11.200). */
export function needsReauthentication(error: unknown): boolean {
  return error instanceof ApiError && error.status === 401 && error.code === 'reauthentication-required';
}

/**
 * The server route that forces a fresh sign-in at the identity provider and comes back to
 * `returnTo` (an in-app path) with a renewed authentication time.
 */
export function reauthenticateUrl(returnTo: string): string {
  return `/auth/reauthenticate?returnTo=${encodeURIComponent(safeReturnPath(returnTo))}`;
}

/**
 * Typed access to the reading room. Every answer is blinded by the server: reads carry a blind
 * code, never a site, subject, date or another reader's verdicts.
 */
@Injectable({ providedIn: 'root' })
export class ReadingApi {
  private readonly http = inject(HttpClient);

  /** Sessions waiting for a read in one study, oldest due first. */
  queue(studyId: () => string | undefined): HttpResourceRef<QueuePage | undefined> {
    return httpResource(() => whenKnown([studyId()], (study) => studyUrl(study, 'reading/queue')), {
      parse: (body) => queuePageSchema.parse(body),
    });
  }

  /** The caller's own reads in one study. */
  myReads(studyId: () => string | undefined): HttpResourceRef<MyRead[] | undefined> {
    return httpResource(() => whenKnown([studyId()], (study) => studyUrl(study, 'reads')), {
      parse: (body) => myReadListSchema.parse(body),
    });
  }

  /** One read with everything its workspace needs. */
  workspace(studyId: () => string | undefined, readId: () => string | undefined): HttpResourceRef<ReadWorkspace | undefined> {
    return httpResource(() => whenKnown([studyId(), readId()], (study, read) => readUrl(study, read)), {
      parse: (body) => readWorkspaceSchema.parse(body),
    });
  }

  /** Ready-to-plot curves of the read's efforts, labelled "Effort n". */
  curves(studyId: () => string | undefined, readId: () => string | undefined): HttpResourceRef<SessionCurves | undefined> {
    return httpResource(() => whenKnown([studyId(), readId()], (study, read) => readUrl(study, read, '/curves')), {
      parse: (body) => sessionCurvesSchema.parse(body),
    });
  }

  /** Queries opened on this read, blinded. */
  queries(studyId: () => string | undefined, readId: () => string | undefined): HttpResourceRef<Query[] | undefined> {
    return httpResource(() => whenKnown([studyId(), readId()], (study, read) => readUrl(study, read, '/queries')), {
      parse: (body) => queryListSchema.parse(body),
    });
  }

  /** Every finding code with its meaning, for the reader's checklist. */
  findingCatalogue(): HttpResourceRef<FindingDescription[] | undefined> {
    return httpResource(() => '/api/formats/finding-codes', { parse: (body) => findingCatalogueSchema.parse(body) });
  }

  /** Claims a queue item; fails with 409 when another reader took it first. */
  claim(studyId: string, queueToken: string): Observable<ReadWorkspace> {
    return this.http
      .post<unknown>(studyUrl(studyId, 'reading/claims'), { queueToken })
      .pipe(map((body) => readWorkspaceSchema.parse(body)));
  }

  /** Saves the whole draft; fails with 409 `stale-read` (see {@link staleReadOf}) when the read moved on. */
  save(studyId: string, readId: string, draft: SaveRead): Observable<ReadWorkspace> {
    return this.http.put<unknown>(readUrl(studyId, readId), draft).pipe(map((body) => readWorkspaceSchema.parse(body)));
  }

  /** Gives the session back to the queue; the read is withdrawn. */
  release(studyId: string, readId: string): Observable<void> {
    return this.http.post(readUrl(studyId, readId, '/release'), null, { responseType: 'text' }).pipe(map(() => undefined));
  }

  /**
   * Signs the read as its author. Fails with 401 `reauthentication-required` (see
   * {@link needsReauthentication}) when the last sign-in is too old.
   */
  sign(studyId: string, readId: string, version: number): Observable<ReadWorkspace> {
    return this.http
      .post<unknown>(readUrl(studyId, readId, '/sign'), { version, meaning: 'authored' })
      .pipe(map((body) => readWorkspaceSchema.parse(body)));
  }

  /** Opens a query to the site about the session of this read. */
  openQuery(studyId: string, readId: string, query: { question: string; requestRepeat: boolean }): Observable<Query> {
    return this.http.post<unknown>(readUrl(studyId, readId, '/queries'), query).pipe(map((body) => querySchema.parse(body)));
  }
}

function studyUrl(studyId: string, rest: string): string {
  return `/api/studies/${encodeURIComponent(studyId)}/${rest}`;
}

function readUrl(studyId: string, readId: string, rest = ''): string {
  return studyUrl(studyId, `reads/${encodeURIComponent(readId)}${rest}`);
}

/** A resource URL once every id it needs is known; `undefined` keeps the resource idle. */
export function whenKnown<T extends readonly (string | undefined)[]>(
  ids: T,
  url: (...known: { [K in keyof T]: string }) => string,
): string | undefined {
  return ids.every((id) => !!id) ? url(...(ids as { [K in keyof T]: string })) : undefined;
}

/** One entry of a stale-read `changed` list in words, whether the server sent words or a small record. */
function changeText(change: unknown): string {
  if (typeof change === 'string') return change;
  if (change && typeof change === 'object') {
    const record = change as Record<string, unknown>;
    for (const key of ['message', 'description', 'text']) {
      if (typeof record[key] === 'string') return record[key];
    }
    return Object.entries(record)
      .map(([key, value]) => `${key}: ${String(value)}`)
      .join(', ');
  }
  return String(change);
}
