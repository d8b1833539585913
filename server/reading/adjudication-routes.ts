import express, { type Router } from 'express';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import { adjudicationViewSchema, claimSchema, queuePageSchema } from '../../shared/contracts/reading.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { AdjudicationService } from './adjudication-service.js';

const studyParams = z.object({ studyId: z.string() });
const ADJUDICATOR: readonly Role[] = ['adjudicator'];

/**
 * The adjudicator's queue, claims and side-by-side view. The adjudication read itself is saved,
 * released and signed through the reads routes (/api/studies/:studyId/reads/:readId).
 */
export function adjudicationRoutes(registry: ApiRouteRegistry, adjudication: AdjudicationService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/adjudication/queue',
    tag: 'reading',
    summary: 'Sessions whose two reads disagree, oldest due first, blinded; never a session you read yourself',
    access: { kind: 'study', roles: [...ADJUDICATOR] },
    params: studyParams,
    response: queuePageSchema,
    handler: ({ principal, params }) => adjudication.queue(principal!, params.studyId),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/adjudication/claims',
    tag: 'reading',
    summary:
      "Take a session for adjudication: opens your adjudication read with the engine's suggestions, beside Read A and Read B " +
      '(409 when another adjudicator has it)',
    access: { kind: 'study', roles: [...ADJUDICATOR] },
    params: studyParams,
    body: claimSchema,
    response: adjudicationViewSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) => adjudication.claim(principal!, params.studyId, body.queueToken),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/adjudications/:readId',
    tag: 'reading',
    summary: 'Your adjudication read with the two disputed reads as Read A and Read B and where they differ, blinded',
    access: { kind: 'study', roles: [...ADJUDICATOR] },
    params: studyParams.extend({ readId: z.string() }),
    response: adjudicationViewSchema,
    handler: ({ principal, params }) => adjudication.view(principal!, params.studyId, params.readId),
  });

  return router;
}
