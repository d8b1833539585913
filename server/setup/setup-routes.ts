import express, { type Router } from 'express';
import * as z from 'zod';
import { roleSchema, type Role } from '../../shared/contracts/auth.js';
import { scheduleSchema } from '../../shared/contracts/sessions.js';
import {
  addPersonSchema,
  createStudySchema,
  deactivatePersonSchema,
  personSchema,
  removalSchema,
  scheduleUpdateSchema,
  siteInputSchema,
  studySetupSchema,
  studySetupUpdateSchema,
} from '../../shared/contracts/setup.js';
import { siteSchema } from '../../shared/contracts/studies.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { PeopleService } from './people-service.js';
import type { SiteSetupService } from './site-setup-service.js';
import type { StudySetupService } from './study-setup-service.js';

const studyParams = z.object({ studyId: z.string() });
const siteParams = studyParams.extend({ siteId: z.string() });
const personParams = studyParams.extend({ userId: z.string() });

const ADMIN: readonly Role[] = ['study-admin'];
/** Data managers and monitors read the setup (monitors check it during oversight); only admins change it. */
const SETUP_READERS: readonly Role[] = ['study-admin', 'data-manager', 'monitor'];

/** The services behind the setup routes. */
export interface SetupServices {
  readonly studies: StudySetupService;
  readonly sites: SiteSetupService;
  readonly people: PeopleService;
}

/** Study setup: creating studies, their settings, visit schedule, sites and people. */
export function setupRoutes(registry: ApiRouteRegistry, services: SetupServices): Router {
  const router = express.Router();
  const { studies, sites, people } = services;

  registry.add(router, {
    method: 'post',
    path: '/api/studies',
    tag: 'setup',
    summary: 'Create a study (study admins of any study may; the creator becomes its study admin)',
    access: { kind: 'signed-in' },
    body: createStudySchema,
    response: studySetupSchema,
    successStatus: 201,
    handler: ({ principal, body }) => studies.create(principal!, body),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/setup',
    tag: 'setup',
    summary: "The study's settings: protocol rule set, read design, blinding, turnaround",
    access: { kind: 'study', roles: [...SETUP_READERS] },
    params: studyParams,
    response: studySetupSchema,
    handler: ({ params }) => studies.setup(params.studyId),
  });

  registry.add(router, {
    method: 'put',
    path: '/api/studies/:studyId/setup',
    tag: 'setup',
    summary: "Change the study's settings (a reason is required once the study has sessions)",
    access: { kind: 'study', roles: [...ADMIN] },
    params: studyParams,
    body: studySetupUpdateSchema,
    response: studySetupSchema,
    handler: ({ principal, params, body }) => studies.update(studyActor(principal, params.studyId, ADMIN), params.studyId, body),
  });

  registry.add(router, {
    method: 'put',
    path: '/api/studies/:studyId/schedule',
    tag: 'setup',
    summary: 'Replace the visit schedule and timepoints (no overlapping windows; visits in use stay)',
    access: { kind: 'study', roles: [...ADMIN] },
    params: studyParams,
    body: scheduleUpdateSchema,
    response: scheduleSchema,
    handler: ({ principal, params, body }) =>
      studies.updateSchedule(studyActor(principal, params.studyId, ADMIN), params.studyId, body),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/sites',
    tag: 'setup',
    summary: 'Add a site (number unique in the study, ISO country, IANA time zone)',
    access: { kind: 'study', roles: [...ADMIN] },
    params: studyParams,
    body: siteInputSchema,
    response: siteSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) => sites.add(studyActor(principal, params.studyId, ADMIN), params.studyId, body),
  });

  registry.add(router, {
    method: 'put',
    path: '/api/studies/:studyId/sites/:siteId',
    tag: 'setup',
    summary: 'Change a site',
    access: { kind: 'study', roles: [...ADMIN] },
    params: siteParams,
    body: siteInputSchema,
    response: siteSchema,
    handler: ({ principal, params, body }) =>
      sites.update(studyActor(principal, params.studyId, ADMIN), params.studyId, params.siteId, body),
  });

  registry.add(router, {
    method: 'delete',
    path: '/api/studies/:studyId/sites/:siteId',
    tag: 'setup',
    summary: 'Remove a site that has no subjects, sessions or calibration checks',
    access: { kind: 'study', roles: [...ADMIN] },
    params: siteParams,
    body: removalSchema,
    handler: ({ principal, params, body }) =>
      sites.remove(studyActor(principal, params.studyId, ADMIN), params.studyId, params.siteId, body.reason),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/people',
    tag: 'setup',
    summary: 'People holding a role in the study, with their site scope and whether their account is active',
    access: { kind: 'study', roles: [...SETUP_READERS] },
    params: studyParams,
    response: z.array(personSchema),
    handler: ({ params }) => people.list(params.studyId),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/people',
    tag: 'setup',
    summary: 'Give a person a role in the study (creating the account if new) and e-mail them an invitation',
    access: { kind: 'study', roles: [...ADMIN] },
    params: studyParams,
    body: addPersonSchema,
    response: personSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) =>
      people.add(studyActor(principal, params.studyId, ADMIN), principal!.user.name, params.studyId, body),
  });

  registry.add(router, {
    method: 'delete',
    path: '/api/studies/:studyId/people/:userId/roles/:role',
    tag: 'setup',
    summary: "Remove a person's role in the study (for a site coordinator optionally at one site only)",
    access: { kind: 'study', roles: [...ADMIN] },
    params: personParams.extend({ role: roleSchema }),
    query: z.object({ siteId: z.string().optional() }),
    body: removalSchema,
    handler: ({ principal, params, query, body }) =>
      people.removeRole(
        studyActor(principal, params.studyId, ADMIN),
        params.studyId,
        params.userId,
        params.role,
        query.siteId,
        body.reason,
      ),
  });

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/people/:userId/deactivate',
    tag: 'setup',
    summary: 'Deactivate an account (never deleted); its sessions and API tokens stop working',
    access: { kind: 'study', roles: [...ADMIN] },
    params: personParams,
    body: deactivatePersonSchema,
    response: personSchema,
    handler: ({ principal, params, body }) =>
      people.deactivate(studyActor(principal, params.studyId, ADMIN), params.studyId, params.userId, body.reason),
  });

  return router;
}
