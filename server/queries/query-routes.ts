import express, { type Router } from 'express';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import { answerQuerySchema, openQuerySchema, querySchema } from '../../shared/contracts/reading.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { QueryCaller, QueryService } from './query-service.js';
import type { QueryAudience } from './query-views.js';

const studyParams = z.object({ studyId: z.string() });
const readParams = studyParams.extend({ readId: z.string() });
const sessionParams = studyParams.extend({ sessionId: z.string() });
const queryParams = studyParams.extend({ queryId: z.string() });
const listQuery = z.object({ status: z.enum(['open', 'answered', 'closed']).optional() });
const followUpSchema = answerQuerySchema;

const READERS: readonly Role[] = ['over-reader', 'adjudicator'];
const DATA_MANAGER: readonly Role[] = ['data-manager'];
const COORDINATOR: readonly Role[] = ['site-coordinator'];
/** Roles that see queries with the session's identity; the study team also sees names. */
const QUERY_VIEWERS: readonly Role[] = ['site-coordinator', 'data-manager', 'monitor'];
const STUDY_TEAM: readonly Role[] = ['data-manager', 'monitor'];
/** The opener's side: the over-reader of the read, or a data manager. */
const QUERY_OWNERS: readonly Role[] = [...READERS, ...DATA_MANAGER];

/** Query routes: readers see only their own reads' queries, blinded; sites see their sites'; the study team sees all. */
export function queryRoutes(registry: ApiRouteRegistry, queries: QueryService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/reads/:readId/queries',
    tag: 'queries',
    summary: 'Open a query to the site from your read (blinded: the answer carries no session identity)',
    access: { kind: 'study', roles: [...READERS] },
    params: readParams,
    body: openQuerySchema,
    response: querySchema,
    successStatus: 201,
    handler: ({ principal, params, body }) =>
      queries.openOnRead(studyActor(principal, params.studyId, READERS), params.studyId, params.readId, body),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/reads/:readId/queries',
    tag: 'queries',
    summary: 'Queries opened from your read (blinded)',
    access: { kind: 'study', roles: [...READERS] },
    params: readParams,
    response: z.array(querySchema),
    handler: ({ principal, params }) => queries.ofRead(params.studyId, params.readId, principal!.user.id),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/sessions/:sessionId/queries',
    tag: 'queries',
    summary: 'Open a query to the site on a session (data manager)',
    access: { kind: 'study', roles: [...DATA_MANAGER] },
    params: sessionParams,
    body: openQuerySchema,
    response: querySchema,
    successStatus: 201,
    handler: ({ principal, params, body, siteScope }) =>
      queries.openOnSession(studyActor(principal, params.studyId, DATA_MANAGER), params.studyId, params.sessionId, siteScope, body),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sessions/:sessionId/queries',
    tag: 'queries',
    summary: "Queries on a session, with their threads (the site never sees the reader's name)",
    access: { kind: 'study', roles: [...QUERY_VIEWERS] },
    params: sessionParams,
    response: z.array(querySchema),
    handler: ({ principal, params, siteScope }) =>
      queries.ofSession(params.studyId, params.sessionId, siteScope, audienceOf(principal, params.studyId)),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/queries',
    tag: 'queries',
    summary: 'Queries of the study in your sites, newest first, optionally of one status',
    access: { kind: 'study', roles: [...QUERY_VIEWERS] },
    params: studyParams,
    query: listQuery,
    response: z.array(querySchema),
    handler: ({ principal, params, query, siteScope }) =>
      queries.list(params.studyId, siteScope, query.status, audienceOf(principal, params.studyId)),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/queries/:queryId/answers',
    tag: 'queries',
    summary: "Answer a query on one of your site's sessions (it becomes answered)",
    access: { kind: 'study', roles: [...COORDINATOR] },
    params: queryParams,
    body: answerQuerySchema,
    response: querySchema,
    successStatus: 201,
    handler: ({ principal, params, body, siteScope }) =>
      queries.answer(studyActor(principal, params.studyId, COORDINATOR), params.studyId, params.queryId, siteScope, body.body),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/queries/:queryId/messages',
    tag: 'queries',
    summary: "Write again on a query as its opener's side (over-reader of the read, or data manager); reopens it",
    access: { kind: 'study', roles: [...QUERY_OWNERS] },
    params: queryParams,
    body: followUpSchema,
    response: querySchema,
    successStatus: 201,
    handler: ({ principal, params, body }) => queries.followUp(ownerOf(principal, params.studyId), params.studyId, params.queryId, body.body),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/queries/:queryId/close',
    tag: 'queries',
    summary: "Close a query (the over-reader who opened it, or a data manager)",
    access: { kind: 'study', roles: [...QUERY_OWNERS] },
    params: queryParams,
    response: querySchema,
    handler: ({ principal, params }) => queries.close(ownerOf(principal, params.studyId), params.studyId, params.queryId),
  });

  return router;
}

function holds(principal: Principal | undefined, studyId: string, roles: readonly Role[]): boolean {
  return !!principal?.assignments.some((assignment) => assignment.studyId === studyId && roles.includes(assignment.role));
}

/** The study team sees names; everyone else on these routes is a site. */
function audienceOf(principal: Principal | undefined, studyId: string): QueryAudience {
  return holds(principal, studyId, STUDY_TEAM) ? 'study' : 'site';
}

/** A data manager acts as one on any query; otherwise the caller is an over-reader, limited to their reads. */
function ownerOf(principal: Principal | undefined, studyId: string): QueryCaller {
  if (!principal) throw AppError.unauthenticated();
  const dataManager = holds(principal, studyId, DATA_MANAGER);
  return {
    actor: dataManager ? { userId: principal.user.id, role: 'data-manager' } : studyActor(principal, studyId, READERS),
    dataManager,
  };
}
