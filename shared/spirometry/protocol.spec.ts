import { describe, expect, it } from '@jest/globals';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { DEFAULT_ENGINE_PARAMETERS } from './effort-analysis.js';
import { REQUIRED_RULE_IDS, ProtocolRuleSetError, isChildAge, resolveProtocol, type ProtocolRuleSet } from './protocol.js';

const ruleSet = JSON.parse(readFileSync(path.resolve('protocols/ats-ers-2019.v1.json'), 'utf8')) as ProtocolRuleSet;

function withRule(id: string, change: Record<string, unknown> | null): unknown {
  return {
    ...ruleSet,
    rules: change === null ? ruleSet.rules.filter((rule) => rule.id !== id) : ruleSet.rules.map((rule) => (rule.id === id ? { ...rule, ...change } : rule)),
  };
}

function refusal(input: unknown): ProtocolRuleSetError {
  try {
    resolveProtocol(input);
  } catch (error) {
    if (error instanceof ProtocolRuleSetError) return error;
    throw error;
  }
  throw new Error('the rule set was accepted');
}

describe('default rule set ats-ers-2019 v1', () => {
  const protocol = resolveProtocol(ruleSet);

  it('carries the ATS/ERS curve-processing and acceptability thresholds', () => {
    // Graham BL et al. 2019 (ATS/ERS), from memory: BEV 5 % / 0.100 L, hesitation 2 s, plateau 0.025 L in 1 s, FET 15 s, 100 Hz.
    expect(protocol.engine).toMatchObject({
      minSampleRateHz: 100,
      bevMaxFractionOfFvc: 0.05,
      bevMaxL: 0.1,
      hesitationMaxS: 2,
      plateauMaxVolumeChangeL: 0.025,
      plateauWindowS: 1,
      longExpirationFetS: 15,
      fivcExcessMaxL: 0.1,
      fivcExcessMaxFractionOfFvc: 0.05,
    });
    // Graham BL et al. 2019 (ATS/ERS), from memory: back-extrapolation through the point of peak flow with slope
    // equal to peak flow, which the rule set writes as a window of 0 (the 2005 practice of 80 ms is an option).
    expect(protocol.engine.backExtrapolationWindowS).toBe(0);
  });

  it('is the engine\'s built-in default', () => {
    // The rule set and DEFAULT_ENGINE_PARAMETERS carry the same values (both cite Graham BL et al. 2019, from memory).
    expect(protocol.engine).toEqual(DEFAULT_ENGINE_PARAMETERS);
  });

  it('lets a study choose the ATS/ERS 2005 80 ms window (Miller MR et al. 2005, from memory)', () => {
    const windowed = resolveProtocol(withRule('time-zero.back-extrapolation-window', { value: 0.08 }));
    expect(windowed.engine.backExtrapolationWindowS).toBe(0.08);
  });

  it('carries the Table 10 tolerances (Graham BL et al. 2019, via a faithful transcription)', () => {
    expect(protocol.grading.overChildAge).toEqual({ abToleranceL: 0.15, cToleranceL: 0.2, dToleranceL: 0.25, fractionOfHighest: 0 });
    expect(protocol.grading.childAge).toEqual({ abToleranceL: 0.1, cToleranceL: 0.15, dToleranceL: 0.2, fractionOfHighest: 0.1 });
    expect(protocol.grading.minAcceptableForA).toBe(3);
    // Graham BL et al. 2019: goal of 3 acceptable values, at most 8 efforts in adults.
    expect(protocol.session).toMatchObject({ goalAcceptableEfforts: 3, maxEffortsAdult: 8 });
  });

  it('carries the calibration tolerance and bronchodilator method', () => {
    // ERS education material on the 2019 standard: 3.00 L syringe within 3 %; Stanojevic S et al. 2022 for the BDR method.
    expect(protocol.calibration).toEqual({ syringeVolumeL: 3, toleranceFraction: 0.03 });
    expect(protocol.bronchodilatorMethod).toBe('ers-ats-2022');
  });

  it('marks every rule with a source and one of the three statuses', () => {
    expect(ruleSet.rules.map((rule) => rule.id).sort()).toEqual([...REQUIRED_RULE_IDS].sort());
    for (const rule of ruleSet.rules) {
      expect(['verified', 'from-memory', 'common-practice']).toContain(rule.status);
      expect(rule.source.length).toBeGreaterThan(0);
    }
  });

  it('counts age in completed years for the child rules', () => {
    // Graham BL et al. 2019: "6 years or younger".
    expect(isChildAge(protocol, 6.99)).toBe(true);
    expect(isChildAge(protocol, 7)).toBe(false);
    expect(isChildAge(protocol, undefined)).toBe(false);
  });
});

describe('refusing an invalid rule set, naming the rule', () => {
  it.each<[string, string, Record<string, unknown> | null, RegExp]>([
    ['a missing rule', 'eofe.long-expiration-fet', null, /"eofe.long-expiration-fet" is missing/],
    ['a wrong value type', 'bev.max-volume', { value: '0.1' }, /"bev.max-volume": value must be a number/],
    ['a wrong unit', 'bev.max-volume', { unit: 'mL' }, /"bev.max-volume": unit must be "L"/],
    ['an out-of-range value', 'bev.max-fraction-of-fvc', { value: 5 }, /"bev.max-fraction-of-fvc": value 5 is outside/],
    ['a negative window', 'time-zero.back-extrapolation-window', { value: -0.01 }, /"time-zero.back-extrapolation-window": value -0.01 is outside 0-1 s/],
    ['an unknown grade', 'study.min-grade-for-endpoint', { value: 'Z' }, /"study.min-grade-for-endpoint": value must be one of/],
    ['an unknown finding code', 'acceptability.bev.findings', { value: 'bev-too-big' }, /unknown finding code "bev-too-big"/],
    ['an unknown status', 'hesitation.max-time', { status: 'guessed' }, /rule "hesitation.max-time"/],
    ['a usable-only criterion', 'acceptability.bev.fev1-acceptable', { value: false }, /"acceptability.bev.fev1-acceptable": a criterion required for a usable FEV1/],
    ['tolerances out of order', 'grade.over-child-age.c-tolerance', { value: 0.1 }, /"grade.over-child-age.c-tolerance": must not be below/],
  ])('%s', (_case, ruleId, change, message) => {
    const error = refusal(withRule(ruleId, change));
    expect(error.message).toMatch(message);
    expect(error.ruleId).toBe(ruleId);
  });

  it('a rule the engine does not know', () => {
    const error = refusal({ ...ruleSet, rules: [...ruleSet.rules, { ...ruleSet.rules[0], id: 'bev.max-volume-typo' }] });
    expect(error.message).toMatch(/"bev.max-volume-typo" is not a rule this engine knows/);
  });

  it('a repeated rule', () => {
    const error = refusal({ ...ruleSet, rules: [...ruleSet.rules, ruleSet.rules[3]] });
    expect(error.message).toMatch(new RegExp(`"${ruleSet.rules[3].id}" appears more than once`));
  });

  it('a set without a version', () => {
    const { version: _version, ...withoutVersion } = ruleSet;
    expect(refusal(withoutVersion).message).toMatch(/^version:/);
  });
});
