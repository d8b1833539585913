import express, { type Router } from 'express';
import * as z from 'zod';
import type { Role } from '../../shared/contracts/auth.js';
import { siteFeedbackSchema } from '../../shared/contracts/reading.js';
import type { Principal } from '../auth/principal.js';
import type { ApiRouteRegistry } from '../http/api-route.js';
import type { FeedbackAudience, FeedbackService } from './feedback-service.js';

const sessionParams = z.object({ studyId: z.string(), sessionId: z.string() });

/** The site of the session and the study team; readers have their own, blinded routes. */
const FEEDBACK_VIEWERS: readonly Role[] = ['site-coordinator', 'data-manager', 'monitor'];
/** Roles that see the signer's name; for the site the signer is "Central over-reader". */
const STUDY_TEAM: readonly Role[] = ['data-manager', 'monitor'];

/** The site feedback of a final over-read, as JSON and as a PDF report. */
export function feedbackRoutes(registry: ApiRouteRegistry, feedback: FeedbackService): Router {
  const router = express.Router();

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sessions/:sessionId/feedback',
    tag: 'feedback',
    summary: 'Over-read feedback for the site: grades, reported values, coaching per effort, signature, caution (404 until final)',
    access: { kind: 'study', roles: [...FEEDBACK_VIEWERS] },
    params: sessionParams,
    response: siteFeedbackSchema,
    handler: ({ principal, params, siteScope }) =>
      feedback.forSession(params.studyId, params.sessionId, siteScope, audienceOf(principal, params.studyId)),
  });

  registry.add(router, {
    method: 'get',
    path: '/api/studies/:studyId/sessions/:sessionId/feedback.pdf',
    tag: 'feedback',
    summary: 'The over-read feedback as a PDF report with the curves (404 until final)',
    access: { kind: 'study', roles: [...FEEDBACK_VIEWERS] },
    params: sessionParams,
    responseDescription: 'The PDF report (application/pdf)',
    handler: async ({ principal, params, siteScope, res }) => {
      const { fileName, bytes } = await feedback.pdf(params.studyId, params.sessionId, siteScope, audienceOf(principal, params.studyId));
      res.status(200).type('application/pdf').setHeader('x-content-type-options', 'nosniff').attachment(fileName).send(bytes);
    },
  });

  return router;
}

function audienceOf(principal: Principal | undefined, studyId: string): FeedbackAudience {
  const studyTeam = principal?.assignments.some((assignment) => assignment.studyId === studyId && STUDY_TEAM.includes(assignment.role));
  return studyTeam ? 'study' : 'site';
}
