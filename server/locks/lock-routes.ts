import express, { type Router } from 'express';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import { createLockSchema, lockListSchema, lockViewSchema, unlockSchema } from '../../shared/contracts/locks.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import { LOCKERS, type LockService } from './lock-service.js';

/** Who sees the locks and their signatures. */
const LOCK_VIEWERS: readonly Role[] = ['data-manager', 'monitor', 'study-admin'];

const studyParams = z.object({ studyId: z.string() });
const lockParams = studyParams.extend({ lockId: z.string() });

/** Locking and unlocking data, each with a reason and an electronic signature. */
export function lockRoutes(registry: ApiRouteRegistry, locks: LockService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/locks',
    tag: 'locks',
    summary: 'Active and past data locks of the study, each with its signatures (printed name, meaning, UTC time, valid)',
    access: { kind: 'study', roles: [...LOCK_VIEWERS] },
    params: studyParams,
    response: lockListSchema,
    handler: ({ params }) => locks.list(params.studyId),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/locks',
    tag: 'locks',
    summary:
      'Lock the data of a session (scopeId: session id), a subject (subject code or id), a site (site number or id), ' +
      'a visit across subjects (visit code or id) or the whole study (no scopeId), with a reason and a signature meaning "locked". ' +
      '409 open-queries while queries in scope are not closed, 409 lock-exists for a lock already active on the same data, ' +
      '401 reauthentication-required without a password login within the last 5 minutes (GET /auth/reauthenticate)',
    access: { kind: 'study', roles: [...LOCKERS] },
    params: studyParams,
    body: createLockSchema,
    response: lockViewSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) => locks.lock(principal, params.studyId, body),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/locks/:lockId/unlock',
    tag: 'locks',
    summary:
      'Unlock with a reason and a signature meaning "unlocked" (401 reauthentication-required as for locking; 409 lock-not-active when already unlocked)',
    access: { kind: 'study', roles: [...LOCKERS] },
    params: lockParams,
    body: unlockSchema,
    response: lockViewSchema,
    handler: ({ principal, params, body }) => locks.unlock(principal, params.studyId, params.lockId, body.reason),
  });

  return router;
}
