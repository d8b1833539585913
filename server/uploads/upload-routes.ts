import express, { type Router } from 'express';
import * as z from 'zod';
import { sessionCurvesSchema, uploadResultSchema } from '../../shared/contracts/sessions.js';
import type { Role } from '../../shared/contracts/auth.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import { SESSION_VIEWERS } from '../sessions/session-routes.js';
import type { UploadService } from './upload-service.js';

const sessionParams = z.object({ studyId: z.string(), sessionId: z.string() });
const uploadParams = sessionParams.extend({ uploadId: z.string() });
const COORDINATOR: readonly Role[] = ['site-coordinator'];

export function uploadRoutes(registry: ApiRouteRegistry, uploads: UploadService, maxUploadBytes: number): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/sessions/:sessionId/uploads',
    tag: 'uploads',
    summary:
      "Upload a session's file: an effort CSV, a .zip of effort CSVs (optional session.json), Tidemark session JSON or a FHIR R4 Bundle. " +
      'The original is stored with its SHA-256 before it is parsed; a file that cannot be used answers 422 with every reason and stays stored.',
    access: { kind: 'study', roles: [...COORDINATOR] },
    params: sessionParams,
    fileUpload: { field: 'file', maxBytes: maxUploadBytes, description: 'The session file, as multipart/form-data field "file".' },
    response: uploadResultSchema,
    successStatus: 201,
    handler: ({ principal, params, file, siteScope }) =>
      uploads.receive(studyActor(principal, params.studyId, COORDINATOR), params.studyId, params.sessionId, siteScope, {
        originalName: file!.originalname,
        contentType: file!.mimetype,
        bytes: file!.buffer,
      }),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/sessions/:sessionId/uploads/:uploadId/reprocess',
    tag: 'uploads',
    summary: 'Check a stored rejected file again (after a correction of the session or a new engine version)',
    access: { kind: 'study', roles: [...COORDINATOR] },
    params: uploadParams,
    response: uploadResultSchema,
    handler: ({ principal, params, siteScope }) =>
      uploads.reprocess(studyActor(principal, params.studyId, COORDINATOR), params.studyId, params.sessionId, params.uploadId, siteScope),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sessions/:sessionId/uploads/:uploadId/original',
    tag: 'uploads',
    summary: 'Download the original file as received (checked against its SHA-256 first)',
    access: { kind: 'study', roles: [...SESSION_VIEWERS] },
    params: uploadParams,
    responseDescription: 'The original bytes, with the SHA-256 in the x-content-sha256 header',
    handler: async ({ params, siteScope, res }) => {
      const { upload, bytes } = await uploads.original(params.studyId, params.sessionId, params.uploadId, siteScope);
      // attachment() sets a type from the file name; the original is always served as opaque bytes.
      res
        .status(200)
        .attachment(upload.originalName)
        .type('application/octet-stream')
        .setHeader('x-content-sha256', upload.sha256)
        .setHeader('x-content-type-options', 'nosniff')
        .send(bytes);
    },
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sessions/:sessionId/curves',
    tag: 'uploads',
    summary: "Plot series of the session's efforts (volume-time, flow-volume, back-extrapolation line)",
    access: { kind: 'study', roles: [...SESSION_VIEWERS] },
    params: sessionParams,
    response: sessionCurvesSchema,
    handler: ({ params, siteScope }) => uploads.curves(params.studyId, params.sessionId, siteScope),
  });

  return router;
}
