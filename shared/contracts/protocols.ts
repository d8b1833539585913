import * as z from 'zod';
import { bronchodilatorSchema, gradeSchema, verdictSchema } from './sessions.js';

/** How well a rule's value is founded (kept in step with `RULE_STATUSES` of the engine). */
export const ruleStatusSchema = z.enum(['verified', 'from-memory', 'common-practice']);
export type RuleStatus = z.infer<typeof ruleStatusSchema>;

/** One rule as the rule-set file states it. */
export const ruleSetRuleSchema = z.object({
  id: z.string(),
  description: z.string(),
  value: z.union([z.number(), z.boolean(), z.string()]),
  /** `L`, `s`, `Hz`, `L/s`, `fraction`, `count`, `years`; empty for flags and names. */
  unit: z.string(),
  source: z.string(),
  status: ruleStatusSchema,
});
export type RuleSetRule = z.infer<typeof ruleSetRuleSchema>;

/**
 * A rule set named as `<id>@<version>`, or `<id>` alone for its latest version.
 * Ids are lower-case words joined by "-", as the files in `protocols/` are named.
 */
export const ruleSetRefSchema = z
  .string()
  .trim()
  .regex(/^[a-z0-9]+(-[a-z0-9]+)*(@[1-9][0-9]*)?$/, 'write a rule set as <id>@<version>, for example ats-ers-2019@1');

/** One file of the catalogue in the list: a usable rule set, or one that fails validation with the reason. */
export const ruleSetSummarySchema = z.object({
  /** From the file name; the content must agree. */
  id: z.string(),
  /** Null when the file name carries no version. */
  version: z.number().int().nullable(),
  fileName: z.string(),
  title: z.string().nullable(),
  basedOn: z.string().nullable(),
  notes: z.string().nullable(),
  ruleCount: z.number().int().nullable(),
  /** Rules recalled rather than read in the primary text: the first candidates for correction. */
  fromMemoryCount: z.number().int().nullable(),
  /** Why the file cannot be used, naming the file and the rule; null for a valid rule set. */
  problem: z.string().nullable(),
});
export type RuleSetSummary = z.infer<typeof ruleSetSummarySchema>;

/** One version of a rule set with every rule, in file order. */
export const ruleSetDetailSchema = z.object({
  id: z.string(),
  version: z.number().int(),
  title: z.string(),
  basedOn: z.string(),
  notes: z.string().nullable(),
  rules: z.array(ruleSetRuleSchema),
});
export type RuleSetDetail = z.infer<typeof ruleSetDetailSchema>;

/** The parts of a rule a comparison looks at. */
export const ruleFieldSchema = z.enum(['value', 'unit', 'source', 'status', 'description']);
export type RuleField = z.infer<typeof ruleFieldSchema>;

/** A rule present in both versions with at least one field changed. */
export const ruleChangeSchema = z.object({
  ruleId: z.string(),
  changedFields: z.array(ruleFieldSchema),
  from: ruleSetRuleSchema,
  to: ruleSetRuleSchema,
});
export type RuleChange = z.infer<typeof ruleChangeSchema>;

const ruleSetHeaderSchema = z.object({ id: z.string(), version: z.number().int(), title: z.string() });

/** `GET /api/protocols/compare`: two versions rule by rule. */
export const ruleSetComparisonSchema = z.object({
  from: ruleSetHeaderSchema,
  to: ruleSetHeaderSchema,
  /** Rules only in `to`. */
  added: z.array(ruleSetRuleSchema),
  /** Rules only in `from`. */
  removed: z.array(ruleSetRuleSchema),
  changed: z.array(ruleChangeSchema),
  unchangedCount: z.number().int(),
});
export type RuleSetComparison = z.infer<typeof ruleSetComparisonSchema>;

export const ruleSetComparisonQuerySchema = z.object({ from: ruleSetRefSchema, to: ruleSetRefSchema });

/** `POST /api/studies/:studyId/replays`. */
export const replayRequestSchema = z.object({ ruleSet: ruleSetRefSchema });
export type ReplayRequest = z.infer<typeof replayRequestSchema>;

/** Where a session sits in the study, for the people who may see sites (never readers). */
const replaySessionCodesSchema = z.object({
  sessionId: z.string(),
  siteNumber: z.string(),
  subjectCode: z.string(),
  visitCode: z.string(),
  timepointCode: z.string(),
  bronchodilator: bronchodilatorSchema,
});

const verdictStepSchema = z.object({ from: verdictSchema, to: verdictSchema });

/** An effort whose suggested FEV1 or FVC verdict differs between the two rule sets (both values shown). */
export const replayEffortChangeSchema = replaySessionCodesSchema.extend({
  effortIndex: z.number().int(),
  effortLabel: z.string(),
  fev1: verdictStepSchema,
  fvc: verdictStepSchema,
});
export type ReplayEffortChange = z.infer<typeof replayEffortChangeSchema>;

/** A session whose FEV1 or FVC grade, or whose endpoint eligibility, differs between the two rule sets. */
export const replaySessionChangeSchema = replaySessionCodesSchema.extend({
  fev1Grade: z.object({ from: gradeSchema, to: gradeSchema }),
  fvcGrade: z.object({ from: gradeSchema, to: gradeSchema }),
  /** Whether the reported value may serve as a study endpoint (the study tightening rules). */
  fev1Endpoint: z.object({ from: z.boolean(), to: z.boolean() }),
  fvcEndpoint: z.object({ from: z.boolean(), to: z.boolean() }),
});
export type ReplaySessionChange = z.infer<typeof replaySessionChangeSchema>;

/** A session that could not be replayed, and why. */
export const replayProblemSchema = replaySessionCodesSchema.extend({
  /** `stored-file`: the stored original failed its SHA-256 check; otherwise the rule set under which analysis failed. */
  where: z.enum(['stored-file', 'current', 'target']),
  message: z.string(),
});
export type ReplayProblem = z.infer<typeof replayProblemSchema>;

/** How many efforts moved from one suggested verdict to another, for one value. */
export const verdictTransitionSchema = z.object({
  value: z.enum(['FEV1', 'FVC']),
  from: verdictSchema,
  to: verdictSchema,
  count: z.number().int(),
});
export type VerdictTransition = z.infer<typeof verdictTransitionSchema>;

export const replayCountsSchema = z.object({
  /** Checked sessions whose stored original was re-analysed under both rule sets. */
  sessionsReplayed: z.number().int(),
  efforts: z.number().int(),
  effortsChanged: z.number().int(),
  sessionsWithGradeChange: z.number().int(),
  sessionsWithEndpointChange: z.number().int(),
  /** Stored suggested verdicts that differ from the re-run under the current rule set (0 unless the rules or engine changed since upload). */
  storedVerdictsDiffering: z.number().int(),
  /** Stored session grades that differ from the re-run under the current rule set. */
  storedGradesDiffering: z.number().int(),
  sessionsWithProblems: z.number().int(),
});
export type ReplayCounts = z.infer<typeof replayCountsSchema>;

/** What a replay found. Nothing of it is written to sessions or reads. */
export const replayResultSchema = z.object({
  id: z.string(),
  studyId: z.string(),
  ranAt: z.string(),
  ranBy: z.string(),
  /** The study's own rule set, re-run by the same engine (`<id>@<version>`). */
  current: z.object({ ref: z.string(), title: z.string() }),
  target: z.object({ ref: z.string(), title: z.string() }),
  counts: replayCountsSchema,
  verdictTransitions: z.array(verdictTransitionSchema),
  effortChanges: z.array(replayEffortChangeSchema),
  sessionChanges: z.array(replaySessionChangeSchema),
  problems: z.array(replayProblemSchema),
  elapsedMs: z.number(),
});
export type ReplayResult = z.infer<typeof replayResultSchema>;
