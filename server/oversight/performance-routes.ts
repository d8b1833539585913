import express, { type Router } from 'express';
import * as z from 'zod';
import { readerPerformanceReportSchema, sitePerformanceReportSchema } from '../../shared/contracts/oversight.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { PerformanceService } from './performance-service.js';

const studyParams = z.object({ studyId: z.string() });

/** Who sees the performance dashboards: the study's oversight roles, not sites or readers. */
const PERFORMANCE_VIEWERS = ['monitor', 'data-manager', 'study-admin'] as const;

const XLSX_TYPE = 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet';

export function performanceRoutes(registry: ApiRouteRegistry, performance: PerformanceService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/performance/sites',
    tag: 'oversight',
    summary:
      'Site performance: sessions, checked and rejected counts, effort acceptability (engine and final reads), grade distribution, ' +
      'turnaround from upload to feedback (median, p90), open queries and their age, calibration compliance',
    access: { kind: 'study', roles: [...PERFORMANCE_VIEWERS] },
    params: studyParams,
    response: sitePerformanceReportSchema,
    handler: ({ params }) => performance.sites(params.studyId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/performance/readers',
    tag: 'oversight',
    summary: "Reader performance: signed reads, read time, overrides of the engine's suggestions, agreement and Cohen's kappa",
    access: { kind: 'study', roles: [...PERFORMANCE_VIEWERS] },
    params: studyParams,
    response: readerPerformanceReportSchema,
    handler: ({ params }) => performance.readers(params.studyId),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/performance/export.xlsx',
    tag: 'oversight',
    summary: 'The site and reader performance dashboards as an xlsx workbook (Sites, Readers and a Read me sheet with the caution)',
    access: { kind: 'study', roles: [...PERFORMANCE_VIEWERS] },
    params: studyParams,
    responseDescription: `${XLSX_TYPE} attachment`,
    handler: async ({ params, res }) => {
      const { fileName, bytes } = await performance.exportXlsx(params.studyId);
      res.status(200).type(XLSX_TYPE).setHeader('x-content-type-options', 'nosniff').attachment(fileName).send(bytes);
    },
  });

  return router;
}
