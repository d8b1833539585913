import express, { type Router } from 'express';
import * as z from 'zod';
import { calibrationCheckEntrySchema, calibrationCheckRecordSchema } from '../../shared/contracts/sessions.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { CalibrationService } from './calibration-service.js';

const siteParams = z.object({ studyId: z.string(), siteId: z.string() });

export function calibrationRoutes(registry: ApiRouteRegistry, calibration: CalibrationService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sites/:siteId/calibration-checks',
    tag: 'calibration',
    summary: "The site's calibration-check log, newest first",
    access: { kind: 'study', roles: ['site-coordinator', 'data-manager', 'monitor', 'study-admin'] },
    params: siteParams,
    response: z.array(calibrationCheckRecordSchema),
    handler: ({ params }) => calibration.list(params.studyId, params.siteId),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/sites/:siteId/calibration-checks',
    tag: 'calibration',
    summary: 'Log a syringe calibration check of a site spirometer',
    access: { kind: 'study', roles: ['site-coordinator'] },
    params: siteParams,
    body: calibrationCheckEntrySchema,
    response: calibrationCheckRecordSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) =>
      calibration.add(
        studyActor(principal, params.studyId, ['site-coordinator']),
        params.studyId,
        params.siteId,
        body,
      ),
  });

  return router;
}
