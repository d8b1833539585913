import * as z from 'zod';
import { roleSchema } from './auth.js';

export const studySummarySchema = z.object({
  id: z.string(),
  code: z.string(),
  title: z.string(),
  sponsor: z.string(),
  indication: z.string(),
  protocolRuleSetId: z.string(),
  /** The caller's roles in this study. */
  myRoles: z.array(roleSchema),
});
export type StudySummary = z.infer<typeof studySummarySchema>;

export const siteSchema = z.object({
  id: z.string(),
  studyId: z.string(),
  number: z.string(),
  name: z.string(),
  countryCode: z.string().length(2),
  timeZone: z.string(),
});
export type Site = z.infer<typeof siteSchema>;
