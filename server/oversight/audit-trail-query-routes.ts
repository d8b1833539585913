import express, { type Router } from 'express';
import * as z from 'zod';
import {
  auditFilterOptionsSchema,
  auditPageSchema,
  auditQuerySchema,
  chainVerificationResultSchema,
} from '../../shared/contracts/oversight.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { AuditTrailQueryService } from './audit-trail-query-service.js';

const studyParams = z.object({ studyId: z.string() });

/** Who reads the audit trail. Readers and site staff do not: it names sites, subjects and readers. */
export const AUDIT_READERS = ['monitor', 'data-manager', 'study-admin'] as const;

export function auditTrailQueryRoutes(registry: ApiRouteRegistry, auditTrail: AuditTrailQueryService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/audit',
    tag: 'oversight',
    summary:
      "The study's audit trail, newest first: who (name and role), when (UTC), what (entity, id, action), old and new values, " +
      'reason. Filters by site, user, entity, action and time; paged by the server. Treatment fields are withheld from monitors ' +
      'where the study blinds them.',
    access: { kind: 'study', roles: [...AUDIT_READERS] },
    params: studyParams,
    query: auditQuerySchema,
    response: auditPageSchema,
    handler: ({ principal, params, query }) => auditTrail.page(principal!, params.studyId, query),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/audit/filter-options',
    tag: 'oversight',
    summary: "Sites, people, entities and actions present in the study's audit trail, for the filter fields",
    access: { kind: 'study', roles: [...AUDIT_READERS] },
    params: studyParams,
    response: auditFilterOptionsSchema,
    handler: ({ params }) => auditTrail.filterOptions(params.studyId),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/audit/verify',
    tag: 'oversight',
    summary:
      'Verify the whole audit hash chain now; names the first broken row. Changes no data (allowed on locked data); ' +
      'the verification itself is recorded in the audit trail.',
    access: { kind: 'study', roles: [...AUDIT_READERS] },
    params: studyParams,
    response: chainVerificationResultSchema,
    handler: ({ principal, params }) => auditTrail.verifyChain(studyActor(principal, params.studyId, AUDIT_READERS), params.studyId),
  });

  return router;
}
