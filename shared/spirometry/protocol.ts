/**
 * Versioned protocol rule sets: every threshold the quality engine applies is a
 * rule with its source and how sure we are of it, so that a corrected reading of
 * the standard is a data change (a new rule-set version), not a code change.
 */
import * as z from 'zod';
import { BRONCHODILATOR_METHODS, type BronchodilatorMethod } from './interpretation/bronchodilator-response.js';
import type { EngineParameters, FindingCode, Grade } from './model.js';

/** How well a rule's value is founded. */
export const RULE_STATUSES = ['verified', 'from-memory', 'common-practice'] as const;
export type RuleStatus = (typeof RULE_STATUSES)[number];

/** One rule of a protocol rule set. */
export const protocolRuleSchema = z.object({
  id: z.string().regex(/^[a-z0-9]+([.-][a-z0-9]+)*$/, 'rule ids are lower-case words joined by "." or "-"'),
  description: z.string().min(1),
  value: z.union([z.number(), z.boolean(), z.string()]),
  /** Unit of a numeric value (`L`, `s`, `Hz`, `L/s`, `fraction`, `count`, `years`); empty for flags and names. */
  unit: z.string(),
  /** Citation (authors, year, table) or the words "common practice". */
  source: z.string().min(1),
  status: z.enum(RULE_STATUSES),
});
export type ProtocolRule = z.infer<typeof protocolRuleSchema>;

/** A whole rule set as stored in `protocols/<id>.v<version>.json`. */
export const protocolRuleSetSchema = z.object({
  id: z.string().regex(/^[a-z0-9]+(-[a-z0-9]+)*$/, 'protocol ids are lower-case words joined by "-"'),
  version: z.number().int().positive(),
  title: z.string().min(1),
  /** The standard(s) the set follows, in words. */
  basedOn: z.string().min(1),
  /** What changed from the previous version, or why the set exists. */
  notes: z.string().optional(),
  rules: z.array(protocolRuleSchema).min(1),
});
export type ProtocolRuleSet = z.infer<typeof protocolRuleSetSchema>;

/** A rule set that cannot be used, naming the rule at fault when there is one. */
export class ProtocolRuleSetError extends Error {
  constructor(
    message: string,
    /** The rule at fault, when the problem is one rule. */
    readonly ruleId?: string,
  ) {
    super(message);
    this.name = 'ProtocolRuleSetError';
  }
}

/** Criteria of ATS/ERS 2019 Table 7 (reconstructed), in table order. */
export const ACCEPTABILITY_CRITERIA = [
  'bev',
  'zero-flow',
  'cough-first-second',
  'glottic-closure-first-second',
  'glottic-closure-after-first-second',
  'eofe',
  'obstructed-mouthpiece',
  'leak',
  'fivc',
] as const;
export type AcceptabilityCriterionId = (typeof ACCEPTABILITY_CRITERIA)[number];

/** The four verdict columns of the acceptability table. */
export const VERDICT_COLUMNS = ['fev1-acceptable', 'fvc-acceptable', 'fev1-usable', 'fvc-usable'] as const;
export type VerdictColumn = (typeof VERDICT_COLUMNS)[number];

/** All finding codes, to check the codes a rule set names (kept in step with `FindingCode`). */
const FINDING_CODES: Record<FindingCode, true> = {
  'bev-excessive': true,
  'hesitation-long': true,
  'end-early': true,
  'cough-first-second': true,
  'cough-late': true,
  'glottic-stop-first-second': true,
  'glottic-stop-late': true,
  'blow-submaximal': true,
  'peak-late': true,
  'zero-drift': true,
  'inspiration-during-blow': true,
  'double-breath': true,
  'fivc-exceeds-fvc': true,
};

const GRADES: readonly Grade[] = ['A', 'B', 'C', 'D', 'E', 'U', 'F'];

/** One acceptability criterion as the rule set defines it. */
export interface AcceptabilityCriterion {
  readonly id: AcceptabilityCriterionId;
  /** Whether passing it is required for each verdict column. */
  readonly requiredFor: Readonly<Record<VerdictColumn, boolean>>;
  /** Finding codes whose presence fails the criterion (empty: judged by the reader or from metrics). */
  readonly findingCodes: readonly FindingCode[];
}

/** Repeatability tolerances for one age band (ATS/ERS 2019 Table 10). */
export interface GradeTolerances {
  /** Grades A and B: two largest acceptable values within this (L). */
  readonly abToleranceL: number;
  readonly cToleranceL: number;
  readonly dToleranceL: number;
  /** Each tolerance is at least this fraction of the highest value (0 for adults). */
  readonly fractionOfHighest: number;
}

/** A rule set turned into the settings the engine uses. */
export interface ResolvedProtocol {
  readonly id: string;
  readonly version: number;
  readonly title: string;
  readonly basedOn: string;
  readonly engine: EngineParameters;
  readonly acceptability: readonly AcceptabilityCriterion[];
  readonly children: {
    /** Age (years) at or below which the young-child rules apply. */
    readonly maxAgeYears: number;
    /** The "first second" criteria look at this window instead (FEV0.75). */
    readonly firstSecondWindowS: number;
  };
  readonly grading: {
    readonly minAcceptableForA: number;
    readonly overChildAge: GradeTolerances;
    readonly childAge: GradeTolerances;
  };
  readonly session: {
    readonly goalAcceptableEfforts: number;
    readonly maxEffortsAdult: number;
    /** Whether EOFE criterion 3 (FVC repeats the largest prior FVC) is applied. */
    readonly eofeRepeatsPriorFvc: boolean;
  };
  readonly study: {
    /** Worst grade whose reported value may serve as a study endpoint. */
    readonly minGradeForEndpoint: Grade;
    readonly minAcceptableEfforts: number;
  };
  readonly bronchodilatorMethod: BronchodilatorMethod;
  readonly calibration: { readonly syringeVolumeL: number; readonly toleranceFraction: number };
  /** Every rule of the set by id, for display and audit. */
  readonly rules: ReadonlyMap<string, ProtocolRule>;
}

type NumberSpec = { kind: 'number'; unit: string; min: number; max: number; integer?: boolean };
type RuleSpec =
  | NumberSpec
  | { kind: 'boolean' }
  | { kind: 'choice'; allowed: readonly string[] }
  | { kind: 'finding-codes' };

const num = (unit: string, min: number, max: number, integer = false): NumberSpec => ({ kind: 'number', unit, min, max, integer });

/** Engine parameters and the rule that carries each. */
const ENGINE_RULES: Record<keyof EngineParameters, [string, NumberSpec]> = {
  minSampleRateHz: ['sampling.min-rate', num('Hz', 1, 100000)],
  backExtrapolationWindowS: ['time-zero.back-extrapolation-window', num('s', 0, 1)],
  bevMaxFractionOfFvc: ['bev.max-fraction-of-fvc', num('fraction', 0, 1)],
  bevMaxL: ['bev.max-volume', num('L', 0, 2)],
  hesitationMaxS: ['hesitation.max-time', num('s', 0, 60)],
  plateauMaxVolumeChangeL: ['eofe.plateau-max-volume-change', num('L', 0, 1)],
  plateauWindowS: ['eofe.plateau-window', num('s', 0, 10)],
  longExpirationFetS: ['eofe.long-expiration-fet', num('s', 0, 60)],
  fivcExcessMaxL: ['fivc.max-excess-volume', num('L', 0, 2)],
  fivcExcessMaxFractionOfFvc: ['fivc.max-excess-fraction-of-fvc', num('fraction', 0, 1)],
  peakLateS: ['findings.peak-late-time', num('s', 0, 10)],
  submaximalPefFraction: ['findings.submaximal-pef-fraction', num('fraction', 0, 1)],
  coughDipFraction: ['findings.cough-dip-fraction', num('fraction', 0, 1)],
  glotticStopFlowLPerS: ['findings.glottic-stop-flow', num('L/s', 0, 5)],
  glotticStopFallTimeS: ['findings.glottic-stop-fall-time', num('s', 0, 5)],
  zeroDriftMaxLPerS: ['findings.zero-drift-max-flow', num('L/s', 0, 5)],
};

/** Every rule id the engine understands, with the kind of value it needs. */
function ruleSpecs(): Map<string, RuleSpec> {
  const specs = new Map<string, RuleSpec>();
  for (const [ruleId, spec] of Object.values(ENGINE_RULES)) specs.set(ruleId, spec);
  for (const criterion of ACCEPTABILITY_CRITERIA) {
    for (const column of VERDICT_COLUMNS) specs.set(`acceptability.${criterion}.${column}`, { kind: 'boolean' });
    specs.set(`acceptability.${criterion}.findings`, { kind: 'finding-codes' });
  }
  specs.set('children.max-age', num('years', 0, 18));
  specs.set('children.first-second-window', num('s', 0.1, 1));
  specs.set('grade.a-min-acceptable', num('count', 2, 8, true));
  for (const band of ['over-child-age', 'child-age']) {
    specs.set(`grade.${band}.ab-tolerance`, num('L', 0, 1));
    specs.set(`grade.${band}.c-tolerance`, num('L', 0, 1));
    specs.set(`grade.${band}.d-tolerance`, num('L', 0, 1));
    specs.set(`grade.${band}.fraction-of-highest`, num('fraction', 0, 1));
  }
  specs.set('session.goal-acceptable-efforts', num('count', 1, 8, true));
  specs.set('session.max-efforts-adult', num('count', 1, 20, true));
  specs.set('eofe.repeats-prior-fvc', { kind: 'boolean' });
  specs.set('study.min-grade-for-endpoint', { kind: 'choice', allowed: GRADES });
  specs.set('study.min-acceptable-efforts', num('count', 0, 8, true));
  specs.set('bronchodilator.method', { kind: 'choice', allowed: BRONCHODILATOR_METHODS });
  specs.set('calibration.syringe-volume', num('L', 0.5, 10));
  specs.set('calibration.tolerance-fraction', num('fraction', 0, 0.2));
  return specs;
}

const RULE_SPECS = ruleSpecs();

/** The rule ids a complete rule set must contain, in a stable order. */
export const REQUIRED_RULE_IDS: readonly string[] = [...RULE_SPECS.keys()];

function checkRule(rule: ProtocolRule, spec: RuleSpec): void {
  const fail = (why: string): never => {
    throw new ProtocolRuleSetError(`rule "${rule.id}": ${why}`, rule.id);
  };
  switch (spec.kind) {
    case 'number':
      if (typeof rule.value !== 'number' || !Number.isFinite(rule.value)) fail(`value must be a number (${spec.unit})`);
      if (rule.unit !== spec.unit) fail(`unit must be "${spec.unit}", not "${rule.unit}"`);
      if ((rule.value as number) < spec.min || (rule.value as number) > spec.max) {
        fail(`value ${String(rule.value)} is outside ${spec.min}-${spec.max} ${spec.unit}`);
      }
      if (spec.integer && !Number.isInteger(rule.value)) fail('value must be a whole number');
      return;
    case 'boolean':
      if (typeof rule.value !== 'boolean') fail('value must be true or false');
      return;
    case 'choice':
      if (typeof rule.value !== 'string' || !spec.allowed.includes(rule.value)) {
        fail(`value must be one of ${spec.allowed.join(', ')}`);
      }
      return;
    case 'finding-codes':
      if (typeof rule.value !== 'string') fail('value must be a space-separated list of finding codes (may be empty)');
      for (const code of splitCodes(rule.value as string)) {
        if (!(code in FINDING_CODES)) fail(`unknown finding code "${code}"`);
      }
      return;
  }
}

function splitCodes(value: string): FindingCode[] {
  return value.split(/[\s,]+/).filter((code) => code.length > 0) as FindingCode[];
}

/**
 * Checks a rule set and turns it into typed settings. Throws `ProtocolRuleSetError`
 * naming the rule when a rule is missing, unknown, repeated, or of the wrong kind,
 * unit or range, or when the grade tolerances are out of order.
 */
export function resolveProtocol(input: unknown): ResolvedProtocol {
  const parsed = protocolRuleSetSchema.safeParse(input);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const path = issue.path;
    const ruleIndex = path[0] === 'rules' && typeof path[1] === 'number' ? path[1] : undefined;
    const ruleId =
      ruleIndex !== undefined ? ((input as { rules?: { id?: unknown }[] }).rules?.[ruleIndex]?.id as string | undefined) : undefined;
    const where = ruleId ? `rule "${ruleId}"` : path.length > 0 ? path.join('.') : 'rule set';
    throw new ProtocolRuleSetError(`${where}: ${issue.message}`, typeof ruleId === 'string' ? ruleId : undefined);
  }
  const ruleSet = parsed.data;
  const rules = new Map<string, ProtocolRule>();
  for (const rule of ruleSet.rules) {
    if (rules.has(rule.id)) throw new ProtocolRuleSetError(`rule "${rule.id}" appears more than once`, rule.id);
    const spec = RULE_SPECS.get(rule.id);
    if (!spec) throw new ProtocolRuleSetError(`rule "${rule.id}" is not a rule this engine knows`, rule.id);
    checkRule(rule, spec);
    rules.set(rule.id, rule);
  }
  for (const ruleId of REQUIRED_RULE_IDS) {
    if (!rules.has(ruleId)) throw new ProtocolRuleSetError(`rule "${ruleId}" is missing`, ruleId);
  }
  const number = (ruleId: string): number => rules.get(ruleId)!.value as number;
  const flag = (ruleId: string): boolean => rules.get(ruleId)!.value as boolean;
  const text = (ruleId: string): string => rules.get(ruleId)!.value as string;

  const engine = Object.fromEntries(
    Object.entries(ENGINE_RULES).map(([field, [ruleId]]) => [field, number(ruleId)]),
  ) as unknown as EngineParameters;

  const acceptability = ACCEPTABILITY_CRITERIA.map((id) => ({
    id,
    requiredFor: Object.fromEntries(
      VERDICT_COLUMNS.map((column) => [column, flag(`acceptability.${id}.${column}`)]),
    ) as Record<VerdictColumn, boolean>,
    findingCodes: splitCodes(text(`acceptability.${id}.findings`)),
  }));
  for (const criterion of acceptability) {
    // A value that must pass a criterion to be usable must also pass it to be acceptable.
    for (const value of ['fev1', 'fvc'] as const) {
      if (criterion.requiredFor[`${value}-usable`] && !criterion.requiredFor[`${value}-acceptable`]) {
        const ruleId = `acceptability.${criterion.id}.${value}-acceptable`;
        throw new ProtocolRuleSetError(
          `rule "${ruleId}": a criterion required for a usable ${value.toUpperCase()} must also be required for an acceptable one`,
          ruleId,
        );
      }
    }
  }

  const tolerances = (band: string): GradeTolerances => {
    const result = {
      abToleranceL: number(`grade.${band}.ab-tolerance`),
      cToleranceL: number(`grade.${band}.c-tolerance`),
      dToleranceL: number(`grade.${band}.d-tolerance`),
      fractionOfHighest: number(`grade.${band}.fraction-of-highest`),
    };
    if (!(result.abToleranceL <= result.cToleranceL)) {
      throw new ProtocolRuleSetError(`rule "grade.${band}.c-tolerance": must not be below the A/B tolerance`, `grade.${band}.c-tolerance`);
    }
    if (!(result.cToleranceL <= result.dToleranceL)) {
      throw new ProtocolRuleSetError(`rule "grade.${band}.d-tolerance": must not be below the C tolerance`, `grade.${band}.d-tolerance`);
    }
    return result;
  };

  return {
    id: ruleSet.id,
    version: ruleSet.version,
    title: ruleSet.title,
    basedOn: ruleSet.basedOn,
    engine,
    acceptability,
    children: { maxAgeYears: number('children.max-age'), firstSecondWindowS: number('children.first-second-window') },
    grading: {
      minAcceptableForA: number('grade.a-min-acceptable'),
      overChildAge: tolerances('over-child-age'),
      childAge: tolerances('child-age'),
    },
    session: {
      goalAcceptableEfforts: number('session.goal-acceptable-efforts'),
      maxEffortsAdult: number('session.max-efforts-adult'),
      eofeRepeatsPriorFvc: flag('eofe.repeats-prior-fvc'),
    },
    study: {
      minGradeForEndpoint: text('study.min-grade-for-endpoint') as Grade,
      minAcceptableEfforts: number('study.min-acceptable-efforts'),
    },
    bronchodilatorMethod: text('bronchodilator.method') as BronchodilatorMethod,
    calibration: {
      syringeVolumeL: number('calibration.syringe-volume'),
      toleranceFraction: number('calibration.tolerance-fraction'),
    },
    rules,
  };
}

/**
 * Whether the young-child rules ("6 years or under" in ATS/ERS 2019) apply. Age is
 * counted in completed years, so 6.9 years is still 6 (before the 7th birthday).
 */
export function isChildAge(protocol: ResolvedProtocol, ageYears: number | undefined): boolean {
  return ageYears !== undefined && Math.floor(ageYears) <= protocol.children.maxAgeYears;
}
