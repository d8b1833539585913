import { describe, expect, it } from '@jest/globals';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { judgeEffort } from './acceptability.js';
import type { EffortMetrics, Finding, FindingCode } from './model.js';
import { resolveProtocol, type ProtocolRuleSet } from './protocol.js';

const ruleSet = JSON.parse(readFileSync(path.resolve('protocols/ats-ers-2019.v1.json'), 'utf8')) as ProtocolRuleSet;
const protocol = resolveProtocol(ruleSet);

/** A clean effort with the closed-form values of the analytic test curve (linear rise, exponential decay; PEF 8, tr 0.1, tau 0.6). */
function metrics(overrides: Partial<EffortMetrics> = {}): EffortMetrics {
  return {
    timeZeroS: 0.05,
    bevL: 0.1,
    hesitationTimeS: 0.05,
    fev075L: 3.6,
    fev1L: 4.21461,
    fev6L: 5.199763,
    fvcL: 5.2,
    pefLPerS: 8,
    timeToPefS: 0.05,
    fef25LPerS: 6.5,
    fef50LPerS: 4.333333,
    fef75LPerS: 2.166667,
    fef2575LPerS: 3.94437,
    fetS: 8,
    fivcL: null,
    endOfTest: { met: true, lastSecondVolumeChangeL: 0.01, plateau: true, longExpiration: false, repeatsPriorFvc: false },
    maxInspirationIndex: 0,
    peakFlowIndex: 10,
    endOfExpirationIndex: 800,
    ...overrides,
  };
}

const finding = (code: FindingCode, values: Record<string, number> = {}): Finding => ({ code, message: code, values });

describe('acceptability table (Graham BL et al. 2019, ATS/ERS, Table 7, reconstructed from memory)', () => {
  it('a clean effort is acceptable for FEV1 and FVC', () => {
    const verdicts = judgeEffort(metrics(), [], protocol, 40);
    expect(verdicts.fev1).toEqual({ verdict: 'acceptable', failures: [] });
    expect(verdicts.fvc.verdict).toBe('acceptable');
    expect(verdicts.fev075).toBeNull();
  });

  // One row per criterion: [row, failing evidence, FEV1 verdict, FVC verdict], read from the table's
  // four columns: required for acceptable -> at most usable; required for usable -> not acceptable.
  it.each<[string, FindingCode | 'no-eofe', string, string]>([
    ['BEV <= 5 % of FVC or 0.100 L', 'bev-excessive', 'not_acceptable', 'not_acceptable'],
    ['no faulty zero-flow setting', 'zero-drift', 'not_acceptable', 'not_acceptable'],
    ['no cough in the first second', 'cough-first-second', 'not_acceptable', 'acceptable'],
    ['no glottic closure in the first second', 'glottic-stop-first-second', 'not_acceptable', 'not_acceptable'],
    ['no glottic closure after the first second', 'glottic-stop-late', 'acceptable', 'usable'],
    ['EOFE met', 'no-eofe', 'acceptable', 'usable'],
    ['FIVC check', 'fivc-exceeds-fvc', 'usable', 'usable'],
  ])('row "%s": %s -> FEV1 %s, FVC %s', (_row, evidence, fev1Verdict, fvcVerdict) => {
    const effort =
      evidence === 'no-eofe'
        ? metrics({ endOfTest: { met: false, lastSecondVolumeChangeL: 0.2, plateau: false, longExpiration: false, repeatsPriorFvc: false } })
        : metrics();
    const findings = evidence === 'no-eofe' ? [] : [finding(evidence)];
    const verdicts = judgeEffort(effort, findings, protocol, 40);
    expect(verdicts.fev1.verdict).toBe(fev1Verdict);
    expect(verdicts.fvc.verdict).toBe(fvcVerdict);
  });

  it('an early end reported as a finding fails EOFE like a missing end', () => {
    // Table 7 row "EOFE met": required for an acceptable FVC only (Graham BL et al. 2019, from memory).
    const verdicts = judgeEffort(metrics(), [finding('end-early')], protocol, 40);
    expect(verdicts.fvc.verdict).toBe('usable');
    expect(verdicts.fvc.failures.map((failure) => failure.criterion)).toEqual(['eofe']);
    expect(verdicts.fev1.verdict).toBe('acceptable');
  });

  it('obstructed mouthpiece and leak rows are reader judgements: a rule set may map codes to them', () => {
    // Table 7 rows "no obstructed mouthpiece" / "no leak": acceptable yes, usable no (Graham BL et al. 2019, from memory).
    const remapped = resolveProtocol({
      ...ruleSet,
      rules: ruleSet.rules.map((rule) => (rule.id === 'acceptability.leak.findings' ? { ...rule, value: 'double-breath' } : rule)),
    });
    const verdicts = judgeEffort(metrics(), [finding('double-breath')], remapped, 40);
    expect(verdicts.fev1.verdict).toBe('usable');
    expect(verdicts.fvc.verdict).toBe('usable');
    expect(verdicts.fev1.failures[0].ruleIds).toEqual(['acceptability.leak.fev1-acceptable']);
  });

  it('findings outside the table do not change the verdicts', () => {
    // common practice: late peak, hesitation, submaximal blow are advice for the reader, not Table 7 criteria.
    const verdicts = judgeEffort(metrics(), [finding('peak-late'), finding('hesitation-long'), finding('blow-submaximal')], protocol, 40);
    expect(verdicts.fev1.verdict).toBe('acceptable');
    expect(verdicts.fvc.verdict).toBe('acceptable');
  });

  it('lists every failed criterion with its rules', () => {
    const verdicts = judgeEffort(metrics(), [finding('bev-excessive'), finding('fivc-exceeds-fvc')], protocol, 40);
    expect(verdicts.fvc.failures.map((failure) => [failure.criterion, failure.blocksUsable])).toEqual([
      ['bev', true],
      ['fivc', false],
    ]);
    expect(verdicts.fvc.failures[0].ruleIds).toContain('acceptability.bev.fvc-usable');
  });

  it('a blow too short for FEV1 has no acceptable FEV1', () => {
    const verdicts = judgeEffort(metrics({ fev1L: null, fev6L: null, fetS: 0.9 }), [], protocol, 40);
    expect(verdicts.fev1.verdict).toBe('not_acceptable');
    expect(verdicts.fev1.failures[0].criterion).toBe('value-missing');
    expect(verdicts.fvc.verdict).toBe('acceptable');
  });
});

describe('young children (6 or under): FEV0.75 for the first-second criteria (Graham BL et al. 2019, from memory)', () => {
  it('judges FEV0.75 with a 0.75 s window: a cough at 0.9 s spares FEV0.75 but not FEV1', () => {
    const verdicts = judgeEffort(metrics(), [finding('cough-first-second', { atS: 0.9 })], protocol, 5);
    expect(verdicts.fev075?.verdict).toBe('acceptable');
    expect(verdicts.fev1.verdict).toBe('not_acceptable');
  });

  it('a cough at 0.5 s fails FEV0.75 as well', () => {
    const verdicts = judgeEffort(metrics(), [finding('cough-first-second', { atS: 0.5 })], protocol, 5);
    expect(verdicts.fev075?.verdict).toBe('not_acceptable');
  });

  it('a first-second finding without a time counts against FEV0.75', () => {
    const verdicts = judgeEffort(metrics(), [finding('glottic-stop-first-second')], protocol, 4);
    expect(verdicts.fev075?.verdict).toBe('not_acceptable');
    expect(verdicts.fvc.verdict).toBe('not_acceptable');
  });

  it('a blow shorter than 1 s can still give an acceptable FEV0.75', () => {
    const verdicts = judgeEffort(metrics({ fev1L: null, fetS: 0.9 }), [], protocol, 3);
    expect(verdicts.fev075?.verdict).toBe('acceptable');
    expect(verdicts.fev1.verdict).toBe('not_acceptable');
  });
});
