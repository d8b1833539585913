import * as z from 'zod';
import { type Recording, SpirometryInputError } from './model.js';
import { MAX_SAMPLE_MAGNITUDE, MAX_TIME_MAGNITUDE_S } from './sample-limits.js';
import { toFloat64Array } from './signal.js';

/** Version tag of Tidemark's session JSON; a new, incompatible layout gets a new tag. */
export const SESSION_DOCUMENT_FORMAT = 'tidemark-session/1';

const code = z.string().trim().min(1).max(64);

/** Demographics at test; what the reference equations and age-dependent grading need. */
export const sessionDemographicsSchema = z
  .object({
    ageYears: z.number().min(0).max(120).optional(),
    heightCm: z.number().min(30).max(250).optional(),
    weightKg: z.number().min(1).max(400).optional(),
    sex: z.enum(['female', 'male']).optional(),
    ethnicity: z
      .enum(['caucasian', 'african-american', 'north-east-asian', 'south-east-asian', 'other', 'mexican-american'])
      .optional(),
  })
  .strict();

/** Metadata of one session. Codes are pseudonymous: no names, no dates of birth. */
export const sessionMetadataSchema = z
  .object({
    subjectCode: code.optional(),
    visit: code.optional(),
    timepoint: code.optional(),
    bronchodilator: z.enum(['pre', 'post']).nullable().optional(),
    /** When the session was tested, ISO 8601 with offset, e.g. 2025-03-14T09:30:00+01:00. */
    testedAt: z.iso.datetime({ offset: true }).optional(),
    /** IANA time zone of the site, e.g. Europe/Lisbon. */
    timeZone: z.string().min(1).max(64).optional(),
    device: z
      .object({
        manufacturer: z.string().max(100).optional(),
        model: z.string().max(100).optional(),
        serialNumber: z.string().max(100).optional(),
        softwareVersion: z.string().max(100).optional(),
      })
      .strict()
      .optional(),
    technicianCode: code.optional(),
    demographics: sessionDemographicsSchema.optional(),
  })
  .strict();

const sampleValue = z
  .number()
  .min(-MAX_SAMPLE_MAGNITUDE, `a sample lies within ±${MAX_SAMPLE_MAGNITUDE} (L or L/s)`)
  .max(MAX_SAMPLE_MAGNITUDE, `a sample lies within ±${MAX_SAMPLE_MAGNITUDE} (L or L/s)`);

/** One effort: one uniformly sampled signal, volume (L, expired positive) or flow (L/s, expiration positive). */
export const sessionEffortSchema = z
  .object({
    label: z.string().trim().min(1).max(200),
    signal: z.enum(['volume', 'flow']),
    sampleRateHz: z.number().positive().max(100_000),
    /** Time of the first sample (s); 0 when absent. */
    startTimeS: z
      .number()
      .min(-MAX_TIME_MAGNITUDE_S, `a start time lies within ±${MAX_TIME_MAGNITUDE_S} s`)
      .max(MAX_TIME_MAGNITUDE_S, `a start time lies within ±${MAX_TIME_MAGNITUDE_S} s`)
      .optional(),
    values: z.array(sampleValue).min(2),
  })
  .strict();

/** A calibration (syringe) check of the device. */
export const calibrationCheckSchema = z
  .object({
    syringeVolumeL: z.number().positive().max(10),
    measuredVolumeL: z.number().positive().max(10),
    checkedAt: z.iso.datetime({ offset: true }),
  })
  .strict();

/** Tidemark session JSON, `"format": "tidemark-session/1"`: metadata and the efforts' sampled signals. */
export const sessionDocumentSchema = z
  .object({
    format: z.literal(SESSION_DOCUMENT_FORMAT),
    metadata: sessionMetadataSchema,
    efforts: z.array(sessionEffortSchema).min(1).max(50),
    calibrationChecks: z.array(calibrationCheckSchema).optional(),
  })
  .strict();

/**
 * The same document with each effort's samples checked by one plain loop instead of a
 * schema call per number: it accepts exactly what {@link sessionDocumentSchema} accepts
 * (an array of at least 2 numbers within the sample limits) and keeps the array as it is, where the full
 * schema would copy it. Long recordings make the difference (12,000 samples an effort).
 */
const sessionDocumentFastSchema = sessionDocumentSchema.extend({
  efforts: z.array(sessionEffortSchema.extend({ values: z.custom<number[]>(isSampleArray) })).min(1).max(50),
});

function isSampleArray(value: unknown): value is number[] {
  if (!Array.isArray(value) || value.length < 2) return false;
  for (let i = 0; i < value.length; i++) {
    const sample: unknown = value[i];
    if (typeof sample !== 'number' || !(Math.abs(sample) <= MAX_SAMPLE_MAGNITUDE)) return false;
  }
  return true;
}

/** A validated session document. */
export type SessionDocument = z.infer<typeof sessionDocumentSchema>;
/** Metadata of a session document. */
export type SessionMetadata = z.infer<typeof sessionMetadataSchema>;
/** One effort of a session document. */
export type SessionEffort = z.infer<typeof sessionEffortSchema>;

/**
 * Validates a parsed session JSON. Throws {@link SpirometryInputError} `session-format`
 * for a missing or unknown format tag and `session-json` for anything else, with the
 * path of the first problems (e.g. `efforts[1].values[20]: expected number`).
 */
export function parseSessionDocument(json: unknown, fileName = 'session.json'): SessionDocument {
  const format = typeof json === 'object' && json !== null ? (json as { format?: unknown }).format : undefined;
  if (format !== SESSION_DOCUMENT_FORMAT) {
    const shown = typeof format === 'string' ? `"${format.slice(0, 60)}"` : 'missing';
    throw new SpirometryInputError(
      'session-format',
      `${fileName}: format is ${shown}; expected "${SESSION_DOCUMENT_FORMAT}"`,
      { file: fileName, column: 'format' },
    );
  }
  const fast = sessionDocumentFastSchema.safeParse(json);
  if (fast.success) return fast.data as SessionDocument;
  // Invalid: the full schema names every problem with its path, e.g. efforts[1].values[20].
  const result = sessionDocumentSchema.safeParse(json);
  if (!result.success) {
    const issues = result.error.issues.slice(0, 3);
    const text = issues.map((issue) => `${formatPath(issue.path)}: ${issue.message}`).join('; ');
    const more = result.error.issues.length > issues.length ? ` (and ${result.error.issues.length - issues.length} more)` : '';
    throw new SpirometryInputError('session-json', `${fileName}: ${text}${more}`, {
      file: fileName,
      column: formatPath(issues[0]?.path ?? []),
    });
  }
  return result.data;
}

function formatPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const key of path) out += typeof key === 'number' ? `[${key}]` : `${out ? '.' : ''}${String(key)}`;
  return out || '(document)';
}

/** The efforts of a session document as recordings, in document order. */
export function sessionDocumentToRecordings(doc: SessionDocument): Recording[] {
  return doc.efforts.map((effort) => ({
    signal: effort.signal,
    sampleRateHz: effort.sampleRateHz,
    startTimeS: effort.startTimeS ?? 0,
    values: toFloat64Array(effort.values),
    label: effort.label,
  }));
}

/** One recording as an effort of a session document (the inverse of {@link sessionDocumentToRecordings}). */
export function recordingToSessionEffort(recording: Recording): SessionEffort {
  return {
    label: recording.label,
    signal: recording.signal,
    sampleRateHz: recording.sampleRateHz,
    startTimeS: recording.startTimeS,
    values: Array.from(recording.values),
  };
}

/** The published JSON Schema of the session document, generated from the zod schema. */
export function sessionDocumentJsonSchema(): Record<string, unknown> {
  return z.toJSONSchema(sessionDocumentSchema) as Record<string, unknown>;
}
