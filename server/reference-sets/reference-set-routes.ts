import express, { type Router } from 'express';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import {
  importReferenceSetFieldsSchema,
  pinReferenceSetSchema,
  referenceSetSchema,
  referenceSetValidationSchema,
  studyReferenceSetSchema,
} from '../../shared/contracts/reference-sets.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { ReferenceSetService } from './reference-set-service.js';
import { REFERENCE_FILE_MAX_BYTES } from './reference-set-validation.js';

const ADMIN: readonly Role[] = ['study-admin'];
/** Who may see which equations a study uses: setup roles, not readers (they see predicted values only). */
const STUDY_EQUATIONS_VIEWERS: readonly Role[] = ['study-admin', 'data-manager', 'monitor'];
const studyParams = z.object({ studyId: z.string() });

export function referenceSetRoutes(registry: ApiRouteRegistry, referenceSets: ReferenceSetService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'post',
    path: '/api/reference-sets',
    tag: 'reference-sets',
    summary:
      "Import a reference set from the publisher's file (GLI Global: the .xlsx workbook; GLI-2012 and NHANES III: a .zip of the two CSV tables). " +
      'Needs the study admin role in at least one study. The file is stored with its SHA-256 and validated; a file with problems answers 422 listing every one and nothing is kept.',
    access: { kind: 'signed-in' },
    body: importReferenceSetFieldsSchema,
    fileUpload: { field: 'file', maxBytes: REFERENCE_FILE_MAX_BYTES, description: 'The reference file, as multipart/form-data field "file".' },
    response: referenceSetSchema,
    successStatus: 201,
    handler: ({ principal, body, file }) =>
      referenceSets.import(principal, { originalName: file!.originalname, contentType: file!.mimetype, bytes: file!.buffer }, body),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/reference-sets',
    tag: 'reference-sets',
    summary: 'Imported reference sets, newest first, with checksum and validation summary',
    access: { kind: 'signed-in' },
    response: z.array(referenceSetSchema),
    handler: () => referenceSets.list(),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/reference-sets/:referenceSetId/validation',
    tag: 'reference-sets',
    summary: 'What was checked when a reference set was imported: layout checks and spot checks with expected and found values',
    access: { kind: 'signed-in' },
    params: z.object({ referenceSetId: z.string() }),
    response: referenceSetValidationSchema,
    handler: ({ params }) => referenceSets.validation(params.referenceSetId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/reference-set',
    tag: 'reference-sets',
    summary: "The study's reference equations and pinned set",
    access: { kind: 'study', roles: [...STUDY_EQUATIONS_VIEWERS] },
    params: studyParams,
    response: studyReferenceSetSchema,
    handler: ({ params }) => referenceSets.studyReferenceSet(params.studyId),
  });

  registry.add(router, {
    method: 'put',
    path: '/api/studies/:studyId/reference-set',
    tag: 'reference-sets',
    summary: 'Pin an imported reference set to the study (null: the built-in ECSC 1993 only); a reason is required once the study has sessions',
    access: { kind: 'study', roles: [...ADMIN] },
    params: studyParams,
    body: pinReferenceSetSchema,
    response: studyReferenceSetSchema,
    handler: ({ principal, params, body }) => referenceSets.pin(studyActor(principal, params.studyId, ADMIN), params.studyId, body),
  });

  return router;
}
