import express, { type Router } from 'express';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import {
  claimSchema,
  myReadSchema,
  queuePageSchema,
  readWorkspaceSchema,
  saveReadSchema,
  signReadSchema,
} from '../../shared/contracts/reading.js';
import { sessionCurvesSchema } from '../../shared/contracts/sessions.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { ReadQueueService } from './read-queue-service.js';
import type { ReadingService } from './reading-service.js';

const studyParams = z.object({ studyId: z.string() });
const readParams = studyParams.extend({ readId: z.string() });
const OVER_READER: readonly Role[] = ['over-reader'];
/** Owners of reads: over-readers (first and second reads) and adjudicators (adjudication reads). */
const READ_OWNERS: readonly Role[] = ['over-reader', 'adjudicator'];

/** The reader's side of the reading room; every answer is blinded (see shared/contracts/reading.ts). */
export function readingRoutes(registry: ApiRouteRegistry, queue: ReadQueueService, reading: ReadingService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/reading/queue',
    tag: 'reading',
    summary: 'Sessions awaiting your over-read, oldest due first, blinded; each with an opaque token to claim it',
    access: { kind: 'study', roles: [...OVER_READER] },
    params: studyParams,
    response: queuePageSchema,
    handler: ({ principal, params }) => queue.queue(principal!, params.studyId),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/reading/claims',
    tag: 'reading',
    summary: "Claim a queue item: opens your read with the engine's suggestions pre-filled (409 when another reader has it)",
    access: { kind: 'study', roles: [...OVER_READER] },
    params: studyParams,
    body: claimSchema,
    response: readWorkspaceSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) => queue.claim(principal!, params.studyId, body.queueToken),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/reads',
    tag: 'reading',
    summary: 'Your reads in this study, newest first',
    access: { kind: 'study', roles: [...READ_OWNERS] },
    params: studyParams,
    response: z.array(myReadSchema),
    handler: ({ principal, params }) => reading.myReads(principal!, params.studyId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/reads/:readId',
    tag: 'reading',
    summary: 'The workspace of one of your reads: efforts, engine findings, your verdicts, the live result, the signature',
    access: { kind: 'study', roles: [...READ_OWNERS] },
    params: readParams,
    response: readWorkspaceSchema,
    handler: ({ principal, params }) => reading.workspace(principal!, params.studyId, params.readId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/reads/:readId/curves',
    tag: 'reading',
    summary: 'Plot series of the efforts of one of your reads, labelled "Effort n"',
    access: { kind: 'study', roles: [...READ_OWNERS] },
    params: readParams,
    response: sessionCurvesSchema,
    handler: ({ principal, params }) => reading.curves(principal!, params.studyId, params.readId),
  });

  registry.add(router, {
    method: 'put',
    path: '/api/studies/:studyId/reads/:readId',
    tag: 'reading',
    summary:
      'Save your verdicts and feedback with the version they were based on; 409 stale-read lists what differs, ' +
      '422 effort-unknown names an effort that is not in this read',
    access: { kind: 'study', roles: [...READ_OWNERS] },
    params: readParams,
    body: saveReadSchema,
    response: readWorkspaceSchema,
    handler: ({ principal, params, body }) => reading.save(principal!, params.studyId, params.readId, body),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/reads/:readId/release',
    tag: 'reading',
    summary: 'Give your claim back: the read is withdrawn and the session returns to the queue',
    access: { kind: 'study', roles: [...READ_OWNERS] },
    params: readParams,
    handler: ({ principal, params }) => reading.release(principal!, params.studyId, params.readId),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/reads/:readId/sign',
    tag: 'reading',
    summary:
      'Sign your read (meaning "authored"); needs a password login at the identity provider within the last 5 minutes ' +
      '(GET /auth/reauthenticate), else 401 reauthentication-required',
    access: { kind: 'study', roles: [...READ_OWNERS] },
    params: readParams,
    body: signReadSchema,
    response: readWorkspaceSchema,
    handler: ({ principal, params, body }) => reading.sign(principal!, params.studyId, params.readId, body),
  });

  return router;
}
