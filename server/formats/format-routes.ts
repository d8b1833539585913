import express, { type Router } from 'express';
import * as z from 'zod';
import { FINDING_CATALOGUE } from '../../shared/spirometry/finding-codes.js';
import { sessionDocumentJsonSchema } from '../../shared/spirometry/session-document.js';
import type { ApiRouteRegistry } from '../http/api-route.js';

const findingDescriptionSchema = z.object({
  code: z.string(),
  title: z.string(),
  explanation: z.string(),
  affects: z.array(z.enum(['fev1', 'fvc'])),
  costs: z.enum(['acceptable', 'acceptable-and-usable', 'none']),
  source: z.string(),
  status: z.string(),
  sessionLevel: z.boolean(),
});

/** Published descriptions of what Tidemark accepts and reports, for site middleware and readers. */
export function formatRoutes(registry: ApiRouteRegistry): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/formats/tidemark-session.schema.json',
    tag: 'formats',
    summary: 'JSON Schema of the Tidemark session document (format "tidemark-session/1")',
    access: { kind: 'public' },
    responseDescription: 'A JSON Schema (draft 2020-12)',
    handler: ({ res }) => {
      res.json(sessionDocumentJsonSchema());
    },
  });

  registry.add(router, {
    method: 'get',
    path: '/api/formats/finding-codes',
    tag: 'formats',
    summary: "The engine's finding codes: meaning, which verdicts they affect, source and status",
    access: { kind: 'public' },
    response: z.array(findingDescriptionSchema),
    handler: () => Object.values(FINDING_CATALOGUE).map((finding) => ({ ...finding, affects: [...finding.affects] })),
  });

  return router;
}
