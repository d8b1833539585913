import express, { type Router } from 'express';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import { agreementSchema } from '../../shared/contracts/reading.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { AdjudicationService } from './adjudication-service.js';

/** Those who oversee the reading; readers never see agreement figures or each other's names. */
const AGREEMENT_VIEWERS: readonly Role[] = ['monitor', 'data-manager', 'study-admin'];

/** Reader agreement of a study. */
export function agreementRoutes(registry: ApiRouteRegistry, adjudication: AdjudicationService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/reading/agreement',
    tag: 'reading',
    summary:
      "Reader agreement over sessions with two signed reads: percent agreement and Cohen's kappa on effort verdicts " +
      '(FEV1 and FVC of each effort; acceptable, usable, not acceptable), grade agreement, and per reader pair',
    access: { kind: 'study', roles: [...AGREEMENT_VIEWERS] },
    params: z.object({ studyId: z.string() }),
    response: agreementSchema,
    handler: ({ params }) => adjudication.agreement(params.studyId),
  });

  return router;
}
