import express, { type Router } from 'express';
import * as z from 'zod';
import {
  ruleSetComparisonQuerySchema,
  ruleSetComparisonSchema,
  ruleSetDetailSchema,
  ruleSetSummarySchema,
} from '../../shared/contracts/protocols.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import { parseRuleSetRef, type ProtocolService } from './protocol-service.js';

const versionParams = z.object({
  id: z.string(),
  version: z.coerce.number({ error: 'version must be a whole number' }).int().positive(),
});

/** Rule sets are reference material: anyone signed in may read them. */
export function protocolRoutes(registry: ApiRouteRegistry, protocols: ProtocolService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/protocols',
    tag: 'protocols',
    summary: 'Every protocol rule set in the catalogue; a file that fails validation is listed with the reason',
    access: { kind: 'signed-in' },
    response: z.array(ruleSetSummarySchema),
    handler: () => protocols.list(),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/protocols/compare',
    tag: 'protocols',
    summary: 'Two rule-set versions rule by rule (from=<id>@<version>&to=<id>@<version>): added, removed, changed, unchanged count',
    access: { kind: 'signed-in' },
    query: ruleSetComparisonQuerySchema,
    response: ruleSetComparisonSchema,
    handler: ({ query }) => protocols.compare(parseRuleSetRef(query.from), parseRuleSetRef(query.to)),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/protocols/:id/versions/:version',
    tag: 'protocols',
    summary: 'One rule-set version with every rule: value, unit, source and status',
    access: { kind: 'signed-in' },
    params: versionParams,
    response: ruleSetDetailSchema,
    handler: ({ params }) => protocols.detail(params.id, params.version),
  });

  return router;
}
