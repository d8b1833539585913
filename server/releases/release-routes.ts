import { pipeline } from 'node:stream/promises';
import express, { type Router } from 'express';
import type { Logger } from 'pino';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import type { AuditTrail } from '../audit/audit-trail.js';
import type { TidemarkDatabase } from '../db/database.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import { AppError } from '../http/app-error.js';
import type { MessageService } from '../messages/message-service.js';
import type { SignatureService } from '../signatures/signature-service.js';
import type { ObjectStorage } from '../storage/object-storage.js';
import {
  releaseAcceptedSchema,
  releaseDetailSchema,
  releaseProgressSchema,
  releaseRequestSchema,
  releaseSummarySchema,
} from '../../shared/contracts/releases.js';
import { ReleaseRepository } from './release-repository.js';
import { ReleaseService } from './release-service.js';
import { ReleaseStore } from './release-store.js';

/** Who releases data. */
const RELEASERS: readonly Role[] = ['data-manager'];
/** Who may see and download releases: they hold no treatment allocation, only locked, read data. */
const RELEASE_READERS: readonly Role[] = ['data-manager', 'study-admin', 'monitor'];

const studyParams = z.object({ studyId: z.string() });
const releaseParams = studyParams.extend({ releaseId: z.string().uuid() });
const fileParams = releaseParams.extend({ fileName: z.string().regex(/^[a-z0-9.-]{1,64}$/, 'must be a release file name') });

/** Builds the release service from the app's dependencies (the app and the benchmark use this). */
export function createReleaseService(
  deps: { readonly db: TidemarkDatabase; readonly storage: ObjectStorage; readonly logger: Logger },
  shared: { readonly audit: AuditTrail; readonly messages: MessageService; readonly signatures: SignatureService; readonly clock: () => Date },
): ReleaseService {
  return new ReleaseService(
    new ReleaseRepository(deps.db),
    new ReleaseStore(deps.storage),
    shared.signatures,
    shared.audit,
    shared.messages,
    shared.clock,
    deps.logger,
  );
}

export function releaseRoutes(registry: ApiRouteRegistry, releases: ReleaseService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/releases',
    tag: 'releases',
    summary:
      'Release locked data: CSV tables, SDTM RE as CSV and SAS transport (v5), define metadata and a workbook, with a manifest of SHA-256s. ' +
      'Every session in scope (whole study by default) must be locked and have a final read, else 409 not-locked names them. ' +
      'The request is signed (meaning: released; re-authentication within 5 minutes needed) and audited; the files are built as a job: ' +
      'poll the progress URL; the data manager is e-mailed when the release is ready.',
    access: { kind: 'study', roles: [...RELEASERS] },
    params: studyParams,
    body: releaseRequestSchema,
    response: releaseAcceptedSchema,
    successStatus: 202,
    handler: ({ principal, params, body }) => {
      if (!principal) throw AppError.unauthenticated();
      const accepted = releases.request(principal, studyActor(principal, params.studyId, RELEASERS), params.studyId, body);
      return { ...accepted, progressUrl: `/api/studies/${params.studyId}/releases/${accepted.release.releaseId}/progress` };
    },
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/releases',
    tag: 'releases',
    summary: "The study's releases, newest first, with their status and files",
    access: { kind: 'study', roles: [...RELEASE_READERS] },
    params: studyParams,
    response: z.array(releaseSummarySchema),
    handler: ({ params }) => releases.list(params.studyId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/releases/:releaseId/progress',
    tag: 'releases',
    summary: 'Progress of a release job: phase, percent, elapsed time, and the error if it failed',
    access: { kind: 'study', roles: [...RELEASE_READERS] },
    params: releaseParams,
    response: releaseProgressSchema,
    handler: ({ params }) => releases.progress(params.studyId, params.releaseId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/releases/:releaseId',
    tag: 'releases',
    summary:
      'A release with its stored manifest, verified now: the manifest against the SHA-256 the audit trail recorded and the signature, ' +
      'every file against the manifest (changed or missing files and a forged manifest are named)',
    access: { kind: 'study', roles: [...RELEASE_READERS] },
    params: releaseParams,
    response: releaseDetailSchema,
    handler: ({ params }) => releases.detail(params.studyId, params.releaseId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/releases/:releaseId/files/:fileName',
    tag: 'releases',
    summary: 'Download one file of a release (or manifest.json), served only after its bytes match the manifest; 409 release-tampered otherwise',
    access: { kind: 'study', roles: [...RELEASE_READERS] },
    params: fileParams,
    responseDescription: 'The file, with its SHA-256 in the x-content-sha256 header',
    handler: async ({ params, res }) => {
      const { file, stream } = await releases.openFile(params.studyId, params.releaseId, params.fileName);
      res
        .status(200)
        .type(file.contentType)
        .setHeader('content-length', String(file.sizeBytes))
        .setHeader('x-content-sha256', file.sha256)
        .setHeader('x-content-type-options', 'nosniff')
        .attachment(file.name);
      await pipeline(stream, res);
    },
  });

  return router;
}
