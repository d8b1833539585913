import express, { type Router } from 'express';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import { replayRequestSchema, replayResultSchema } from '../../shared/contracts/protocols.js';
import { studyActor } from '../http/access.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import { parseRuleSetRef } from '../protocols/protocol-service.js';
import { KEPT_REPLAYS, type ReplayService } from './replay-service.js';

/** The change list names sites and subjects, so it is for these roles and never for readers. */
const REPLAYERS: readonly Role[] = ['study-admin', 'data-manager'];

const studyParams = z.object({ studyId: z.string() });
const replayParams = studyParams.extend({ replayId: z.string() });

export function replayRoutes(registry: ApiRouteRegistry, replays: ReplayService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'post',
    path: '/api/studies/:studyId/replays',
    tag: 'protocols',
    summary:
      "Replay the study's checked sessions under another rule set: each stored original is analysed under the study's own rule set " +
      'and under the target, and the efforts and sessions whose suggestions change are listed. Nothing is written to sessions or reads; ' +
      `the replay is audited. The last ${KEPT_REPLAYS} replays are kept in memory for download until the server restarts.`,
    access: { kind: 'study', roles: [...REPLAYERS] },
    params: studyParams,
    body: replayRequestSchema,
    response: replayResultSchema,
    successStatus: 201,
    handler: ({ principal, params, body }) =>
      replays.replay(studyActor(principal, params.studyId, REPLAYERS), params.studyId, parseRuleSetRef(body.ruleSet)),
  });

  // Before the JSON route: ":replayId" alone would also match "<id>.csv".
  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/replays/:replayId.csv',
    tag: 'protocols',
    summary: 'Download the change list of a kept replay as CSV (one row per changed value)',
    access: { kind: 'study', roles: [...REPLAYERS] },
    params: replayParams,
    responseDescription: 'text/csv attachment',
    handler: ({ params, res }) => {
      const { fileName, text } = replays.csv(params.studyId, params.replayId);
      res.status(200).type('text/csv; charset=utf-8').attachment(fileName).send(text);
    },
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/replays/:replayId',
    tag: 'protocols',
    summary: 'A kept replay again, as it was returned when it ran',
    access: { kind: 'study', roles: [...REPLAYERS] },
    params: replayParams,
    response: replayResultSchema,
    handler: ({ params }) => replays.find(params.studyId, params.replayId),
  });

  return router;
}
