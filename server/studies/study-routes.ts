import express, { type Router } from 'express';
import { z } from 'zod';
import { siteSchema, studySummarySchema } from '../../shared/contracts/studies.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { StudyService } from './study-service.js';

const studyParams = z.object({ studyId: z.string() });

/** Readers are blinded to sites, so site data is for the other roles only. */
const SITE_VIEWERS = ['study-admin', 'site-coordinator', 'data-manager', 'monitor'] as const;

export function studyRoutes(registry: ApiRouteRegistry, studies: StudyService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies',
    tag: 'studies',
    summary: 'Studies in which you hold a role',
    access: { kind: 'signed-in' },
    response: z.array(studySummarySchema),
    handler: ({ principal }) => studies.studiesOf(principal!),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId',
    tag: 'studies',
    summary: 'One study',
    access: {
      kind: 'study',
      roles: ['study-admin', 'site-coordinator', 'over-reader', 'adjudicator', 'data-manager', 'monitor'],
    },
    params: studyParams,
    response: studySummarySchema,
    handler: ({ principal, params }) => studies.study(principal!, params.studyId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sites',
    tag: 'studies',
    summary: 'Sites of a study (a site coordinator sees their own sites only)',
    access: { kind: 'study', roles: [...SITE_VIEWERS] },
    params: studyParams,
    response: z.array(siteSchema),
    handler: ({ params, siteScope }) => studies.sites(params.studyId, siteScope),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sites/:siteId',
    tag: 'studies',
    summary: 'One site',
    access: { kind: 'study', roles: [...SITE_VIEWERS] },
    params: studyParams.extend({ siteId: z.string() }),
    response: siteSchema,
    handler: ({ params }) => studies.site(params.studyId, params.siteId),
  });

  return router;
}
