import * as z from 'zod';

/** Equations whose tables an admin imports from the publisher's files (ECSC 1993 is built in). */
export const importableEquationsIdSchema = z.enum(['gli-global-2022', 'gli-2012', 'nhanes3']);
export type ImportableEquationsId = z.infer<typeof importableEquationsIdSchema>;

/** Every equations set a study may use. */
export const studyEquationsIdSchema = z.enum(['gli-global-2022', 'gli-2012', 'nhanes3', 'ecsc-1993']);
export type StudyEquationsId = z.infer<typeof studyEquationsIdSchema>;

/** Names shown to people, with the publication each set comes from. */
export const EQUATIONS_NAMES: Readonly<Record<StudyEquationsId, string>> = {
  'gli-global-2022': 'GLI Global 2022 (Bowerman et al. 2023)',
  'gli-2012': 'GLI-2012 (Quanjer et al. 2012)',
  nhanes3: 'NHANES III (Hankinson et al. 1999)',
  'ecsc-1993': 'ECSC/ERS 1993 (Quanjer et al. 1993), built in',
};

/** Short names for messages and labels. */
export const EQUATIONS_SHORT_NAMES: Readonly<Record<StudyEquationsId, string>> = {
  'gli-global-2022': 'GLI Global 2022',
  'gli-2012': 'GLI-2012',
  nhanes3: 'NHANES III',
  'ecsc-1993': 'ECSC/ERS 1993',
};

/** What each importable set is uploaded as: the file layouts Tidemark reads. */
export const EQUATIONS_FILE_LAYOUTS: Readonly<Record<ImportableEquationsId, string>> = {
  'gli-global-2022':
    'The publisher’s lookup workbook (.xlsx): sheets "Male FEV1" … "Female FEV1 FVC", columns Age, M Spline, S Spline, L Spline for 3-95 y, equations written beside them.',
  'gli-2012': 'A .zip holding coefficients.csv (rows a0-a6, p0-p5, q0-q1) and splines.csv (age, then e.g. FEV1_males_Mspline).',
  nhanes3:
    'A .zip holding coefficients-tables-4-5.csv (parameter, sex, ethnicity, age_group, a0_pred … a3_ht2_lln) and coefficients-table-6.csv (parameter, sex, ethnicity, a0_pred, a0_lln, a1_age).',
};

/** The multipart text fields of `POST /api/reference-sets` (the file goes in field `file`). */
export const importReferenceSetFieldsSchema = z.object({
  equationsId: importableEquationsIdSchema,
  /** Shown in lists; defaults to the equations' name and the file name. */
  label: z.string().trim().max(200).optional(),
});
export type ImportReferenceSetFields = z.infer<typeof importReferenceSetFieldsSchema>;

/** One structural check of an imported file: what was expected and what the file holds. */
export const referenceSetCheckSchema = z.object({
  /** What was checked, e.g. `Sheet "Male FEV1": ages`. */
  subject: z.string(),
  expected: z.string(),
  found: z.string(),
  passed: z.boolean(),
});
export type ReferenceSetCheck = z.infer<typeof referenceSetCheckSchema>;

/** A value computed with the imported tables and compared with a published or independently computed one. */
export const referenceSpotCheckSchema = z.object({
  /** e.g. "Male, 25 y, 155 cm: FEV1 predicted". */
  description: z.string(),
  /** Where the expected value comes from. */
  source: z.string(),
  expected: z.number(),
  /** Null when the imported tables gave no value. */
  found: z.number().nullable(),
  /** Largest accepted difference, in the parameter's unit. */
  tolerance: z.number(),
  passed: z.boolean(),
});
export type ReferenceSpotCheck = z.infer<typeof referenceSpotCheckSchema>;

/** Everything the import checked; kept with the set, and the `details.validation` of a refusal. */
export const referenceSetValidationSchema = z.object({
  equationsId: importableEquationsIdSchema,
  /** One line for lists, e.g. "6 sheets, ages 3-95 y, 8 of 8 spot checks agree". */
  summary: z.string(),
  checks: z.array(referenceSetCheckSchema),
  spotChecks: z.array(referenceSpotCheckSchema),
  /** Every reason the file cannot be used; empty for an imported set. */
  problems: z.array(z.string()),
});
export type ReferenceSetValidation = z.infer<typeof referenceSetValidationSchema>;

/** `details` of a 422 `reference-set-invalid` answer: nothing was kept. */
export const referenceSetRefusalSchema = z.object({
  problems: z.array(z.string()),
  validation: referenceSetValidationSchema,
});
export type ReferenceSetRefusal = z.infer<typeof referenceSetRefusalSchema>;

/** An imported reference set as lists show it. */
export const referenceSetSchema = z.object({
  id: z.string(),
  equationsId: importableEquationsIdSchema,
  label: z.string(),
  originalName: z.string(),
  sha256: z.string(),
  sizeBytes: z.number().int(),
  importedBy: z.object({ userId: z.string(), name: z.string() }),
  importedAt: z.string(),
  validationSummary: z.string(),
});
export type ReferenceSet = z.infer<typeof referenceSetSchema>;

/** `PUT /api/studies/:studyId/reference-set`: pin a set, or null for the built-in ECSC 1993 only. */
export const pinReferenceSetSchema = z.object({
  referenceSetId: z.string().min(1).nullable(),
  /** Required once the study has sessions. */
  reason: z.string().trim().min(3, 'give a reason of at least 3 characters').max(500).optional(),
});
export type PinReferenceSet = z.infer<typeof pinReferenceSetSchema>;

/** Which equations a study computes predicted values with. */
export const studyReferenceSetSchema = z.object({
  studyId: z.string(),
  equationsId: studyEquationsIdSchema,
  /** Null: no imported set; only the built-in ECSC 1993 equations are available. */
  referenceSetId: z.string().nullable(),
  /** Whether the study has sessions, so that a change needs a reason. */
  reasonRequired: z.boolean(),
});
export type StudyReferenceSet = z.infer<typeof studyReferenceSetSchema>;
