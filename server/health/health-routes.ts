import express, { type Router } from 'express';
import { healthResponseSchema } from '../../shared/contracts/health.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import { buildOpenApiDocument } from '../openapi/openapi-document.js';
import type { HealthService } from './health-service.js';

export function healthRoutes(registry: ApiRouteRegistry, health: HealthService, version: string): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/health',
    tag: 'operations',
    summary: 'Status of the database, object storage, identity provider and mail server',
    access: { kind: 'public' },
    response: healthResponseSchema,
    handler: async ({ res }) => {
      const report = await health.check();
      // A load balancer reads the status code; people read the body.
      if (report.status !== 'ok') res.status(503);
      res.json(healthResponseSchema.parse(report));
    },
  });

  registry.add(router, {
    method: 'get',
    path: '/api/openapi.json',
    tag: 'operations',
    summary: 'This API described as OpenAPI 3.1, generated from its zod contracts',
    access: { kind: 'public' },
    responseDescription: 'The OpenAPI document',
    handler: ({ res }) => {
      res.json(buildOpenApiDocument(registry.all(), version));
    },
  });

  return router;
}
