import * as z from 'zod';
import { roleSchema } from './auth.js';
import { timepointSchema, visitSchema } from './sessions.js';

/** Why a change is made; required by the server once the study holds data (any session). */
const reasonField = z.string().trim().max(1000, 'keep the reason under 1000 characters').optional();

/** Letters, digits and `-`, `_`, `.`; short enough to sit in a file name and a table column. */
const codeText = (what: string) =>
  z
    .string()
    .trim()
    .min(1, `give the ${what}`)
    .max(32, `the ${what} has at most 32 characters`)
    .regex(/^[A-Za-z0-9][A-Za-z0-9._-]*$/, `the ${what} uses letters, digits, "-", "_" and "." only`);

const text = (what: string, max: number) =>
  z.string().trim().min(1, `give the ${what}`).max(max, `the ${what} has at most ${max} characters`);

/** How many over-readers read each session. */
export const readDesignSchema = z.enum(['single', 'dual-all', 'dual-sample']);
export type ReadDesign = z.infer<typeof readDesignSchema>;

/** What readers may see of a session's place in the schedule, and whether monitors are blinded to treatment. */
export const blindingSchema = z.object({
  readersSeeVisit: z.boolean(),
  readersSeeTimepoint: z.boolean(),
  readersSeeBronchodilator: z.boolean(),
  monitorsBlinded: z.boolean(),
});
export type Blinding = z.infer<typeof blindingSchema>;

/** Longest turnaround a study may promise: 30 days. Common practice. */
export const MAX_TURNAROUND_HOURS = 720;

/** `POST /api/studies`: a new study; the protocol rule set defaults to the built-in ATS/ERS 2019 set. */
export const createStudySchema = z.object({
  code: codeText('study code'),
  title: text('title', 300),
  sponsor: text('sponsor', 200),
  indication: text('indication', 200),
  protocolRuleSetId: z.string().trim().min(1).max(100).optional(),
  protocolVersion: z.number().int().positive().nullable().optional(),
});
export type CreateStudy = z.infer<typeof createStudySchema>;

/** `PUT /api/studies/:studyId/setup`: the whole study configuration. */
export const studySetupUpdateSchema = z
  .object({
    code: codeText('study code'),
    title: text('title', 300),
    sponsor: text('sponsor', 200),
    indication: text('indication', 200),
    protocolRuleSetId: z.string().trim().min(1, 'choose a protocol rule set').max(100),
    /** Pinned version; null follows the latest version in the catalogue. */
    protocolVersion: z.number().int().positive('a rule-set version is a whole number from 1').nullable(),
    readDesign: readDesignSchema,
    /** Fraction of sessions read twice; required for dual-sample, ignored otherwise. */
    dualSampleFraction: z.number().min(0, 'the fraction is between 0 and 1').max(1, 'the fraction is between 0 and 1').nullable().optional(),
    blinding: blindingSchema,
    turnaroundHours: z
      .number()
      .int('the turnaround is a whole number of hours')
      .min(1, 'the turnaround is at least 1 hour')
      .max(MAX_TURNAROUND_HOURS, `the turnaround is at most ${MAX_TURNAROUND_HOURS} hours (30 days)`),
    reason: reasonField,
  })
  .superRefine((value, context) => {
    if (value.readDesign === 'dual-sample' && !value.dualSampleFraction) {
      context.addIssue({
        code: 'custom',
        path: ['dualSampleFraction'],
        message: 'a dual-sample design needs the fraction of sessions read twice, above 0 and at most 1',
      });
    }
  });
export type StudySetupUpdate = z.infer<typeof studySetupUpdateSchema>;

/** A protocol rule set the study may pin. */
export const protocolChoiceSchema = z.object({ id: z.string(), version: z.number().int(), title: z.string() });
export type ProtocolChoice = z.infer<typeof protocolChoiceSchema>;

/** `GET /api/studies/:studyId/setup`. */
export const studySetupSchema = z.object({
  id: z.string(),
  code: z.string(),
  title: z.string(),
  sponsor: z.string(),
  indication: z.string(),
  protocolRuleSetId: z.string(),
  protocolVersion: z.number().int().nullable(),
  readDesign: readDesignSchema,
  dualSampleFraction: z.number(),
  blinding: blindingSchema,
  turnaroundHours: z.number().int(),
  /** Reference equations and the imported set they use (chosen on the reference-sets page). */
  equationsId: z.string(),
  referenceSetId: z.string().nullable(),
  /** Sessions registered so far; from the first one on, every change needs a reason. */
  sessionCount: z.number().int(),
  updatedAt: z.string().nullable(),
  /** Rule sets in the catalogue, for choosing one. */
  protocolChoices: z.array(protocolChoiceSchema),
});
export type StudySetup = z.infer<typeof studySetupSchema>;

/** One visit as the admin enters it. */
export const visitInputSchema = visitSchema.extend({
  code: codeText('visit code'),
  name: text('visit name', 120),
  dayOffset: z.number().int('the planned day is a whole number').min(-3650).max(3650),
  windowBeforeDays: z.number().int('windows are whole days').nonnegative('a window cannot be negative'),
  windowAfterDays: z.number().int('windows are whole days').nonnegative('a window cannot be negative'),
});
export const timepointInputSchema = timepointSchema.extend({
  code: codeText('timepoint code'),
  name: text('timepoint name', 120),
});

/** `PUT /api/studies/:studyId/schedule`: the whole schedule; visits keep their order as listed. */
export const scheduleUpdateSchema = z.object({
  visits: z.array(visitInputSchema).max(200),
  timepoints: z.array(timepointInputSchema).max(50),
  reason: reasonField,
});
export type ScheduleUpdate = z.infer<typeof scheduleUpdateSchema>;

/** `POST` / `PUT` of a site. */
export const siteInputSchema = z.object({
  number: z
    .string()
    .trim()
    .min(1, 'give the site number')
    .max(16, 'the site number has at most 16 characters')
    .regex(/^[A-Za-z0-9][A-Za-z0-9-]*$/, 'the site number uses letters, digits and "-" only'),
  name: text('site name', 200),
  countryCode: z
    .string()
    .trim()
    .toUpperCase()
    .regex(/^[A-Z]{2}$/, 'the country is a two-letter ISO 3166 code, such as NO or ES'),
  timeZone: text('time zone', 64),
  reason: reasonField,
});
export type SiteInput = z.infer<typeof siteInputSchema>;

/** Body of a removal: the reason, needed once the study has data. */
export const removalSchema = z.object({ reason: reasonField });
export type Removal = z.infer<typeof removalSchema>;

/** One role a person holds in the study; a site coordinator's sites by id. */
export const personRoleSchema = z.object({
  role: roleSchema,
  siteIds: z.array(z.string()).nullable(),
});

/** `GET /api/studies/:studyId/people`: everyone holding a role in the study. */
export const personSchema = z.object({
  userId: z.string(),
  email: z.string(),
  name: z.string(),
  /** Whether the account may sign in; deactivated accounts are kept for the audit trail. */
  active: z.boolean(),
  roles: z.array(personRoleSchema),
});
export type Person = z.infer<typeof personSchema>;

/** `POST /api/studies/:studyId/people`: invites a person (a new account if needed) into one role. */
export const addPersonSchema = z
  .object({
    email: z.string().trim().toLowerCase().pipe(z.email('give a valid e-mail address')),
    name: text('name', 120),
    role: roleSchema,
    siteIds: z.array(z.string().min(1)).max(200).optional(),
    reason: reasonField,
  })
  .superRefine((value, context) => {
    const siteCount = value.siteIds?.length ?? 0;
    if (value.role === 'site-coordinator' && siteCount === 0) {
      context.addIssue({ code: 'custom', path: ['siteIds'], message: 'a site coordinator needs at least one site of this study' });
    }
    if (value.role !== 'site-coordinator' && siteCount > 0) {
      context.addIssue({
        code: 'custom',
        path: ['siteIds'],
        message: `only site coordinators are limited to sites; a ${value.role} works across the whole study`,
      });
    }
  });
export type AddPerson = z.infer<typeof addPersonSchema>;

/** `POST /api/studies/:studyId/people/:userId/deactivate`. */
export const deactivatePersonSchema = z.object({
  reason: z.string().trim().min(1, 'give the reason for deactivating the account').max(1000),
});
export type DeactivatePerson = z.infer<typeof deactivatePersonSchema>;
