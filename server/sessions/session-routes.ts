import express, { type Router } from 'express';
import * as z from 'zod';
import {
  correctSessionSchema,
  enrolSubjectSchema,
  registerSessionSchema,
  scheduleSchema,
  sessionDetailSchema,
  sessionListQuerySchema,
  sessionPageSchema,
  subjectSchema,
} from '../../shared/contracts/sessions.js';
import type { Role } from '../../shared/contracts/auth.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { SessionService } from './session-service.js';

const studyParams = z.object({ studyId: z.string() });
const siteParams = studyParams.extend({ siteId: z.string() });
const sessionParams = studyParams.extend({ sessionId: z.string() });

/** Roles that see sessions with their site and subject (readers work blinded, elsewhere). */
export const SESSION_VIEWERS: readonly Role[] = ['site-coordinator', 'data-manager', 'monitor', 'study-admin'];
const COORDINATOR: readonly Role[] = ['site-coordinator'];

export function sessionRoutes(registry: ApiRouteRegistry, sessions: SessionService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/schedule',
    tag: 'sessions',
    summary: "The study's visits (with windows) and timepoints",
    access: { kind: 'study', roles: [...SESSION_VIEWERS, 'over-reader', 'adjudicator'] },
    params: studyParams,
    response: scheduleSchema,
    handler: ({ params }) => sessions.schedule(params.studyId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sites/:siteId/subjects',
    tag: 'sessions',
    summary: 'Subjects enrolled at a site (pseudonymous codes)',
    access: { kind: 'study', roles: [...SESSION_VIEWERS] },
    params: siteParams,
    response: z.array(subjectSchema),
    handler: ({ params }) => sessions.subjects(params.studyId, params.siteId),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/sites/:siteId/subjects',
    tag: 'sessions',
    summary: 'Enrol a subject at a site by pseudonymous code',
    access: { kind: 'study', roles: [...COORDINATOR, 'study-admin'] },
    params: siteParams,
    body: enrolSubjectSchema,
    response: subjectSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) =>
      sessions.enrolSubject(studyActor(principal, params.studyId, [...COORDINATOR, 'study-admin']), params.studyId, params.siteId, body.code),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/sites/:siteId/sessions',
    tag: 'sessions',
    summary: 'Register a session (subject, visit, timepoint, pre/post bronchodilator, demographics at test)',
    access: { kind: 'study', roles: [...COORDINATOR] },
    params: siteParams,
    body: registerSessionSchema,
    response: sessionDetailSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) =>
      sessions.register(studyActor(principal, params.studyId, COORDINATOR), params.studyId, params.siteId, body),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sessions',
    tag: 'sessions',
    summary: 'Sessions of the study in your sites: filtered, sorted and paged by the server',
    access: { kind: 'study', roles: [...SESSION_VIEWERS] },
    params: studyParams,
    query: sessionListQuerySchema,
    response: sessionPageSchema,
    handler: ({ params, query, siteScope }) => sessions.page(params.studyId, siteScope, query),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sessions/:sessionId',
    tag: 'sessions',
    summary: 'One session: registration, files and the automated checks',
    access: { kind: 'study', roles: [...SESSION_VIEWERS] },
    params: sessionParams,
    response: sessionDetailSchema,
    handler: ({ params, siteScope }) => sessions.detail(params.studyId, params.sessionId, siteScope),
  });

  registry.add(router, {
    method: 'patch',
    path: '/api/studies/:studyId/sessions/:sessionId',
    tag: 'sessions',
    summary: 'Correct registration data (a reason is required once the session has a file)',
    access: { kind: 'study', roles: [...COORDINATOR] },
    params: sessionParams,
    body: correctSessionSchema,
    response: sessionDetailSchema,
    handler: ({ principal, params, body, siteScope }) =>
      sessions.correct(studyActor(principal, params.studyId, COORDINATOR), params.studyId, params.sessionId, siteScope, body),
  });

  return router;
}
