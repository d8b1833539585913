import { describe, expect, it } from '@jest/globals';
import { DEFAULT_ENGINE_PARAMETERS, analyzeRecording } from './effort-analysis.js';
import type { FindingCode, SignalKind } from './model.js';
import { type EffortFault, type EffortSpec, generateEffort } from './synthetic/curve-generator.js';

// Each fault is built into a synthetic curve so that the rule it breaks is clear from its
// definition (ATS/ERS 2019 (Graham 2019) Table 7, reconstructed from memory, or common
// practice for the other findings); the curve must show that finding,
// and nothing but what the fault implies.
const FAULT_CASES: [EffortFault, string][] = [
  ['slow-start', 'BEV above the greater of 5 % FVC and 0.100 L (ATS/ERS 2019, from memory)'],
  ['late-peak', 'time to PEF above 150 ms (common practice)'],
  ['early-end', 'no 0.025 L/1 s plateau and FET under 15 s (ATS/ERS 2019, from memory)'],
  ['cough-first-second', 'flow dip and recovery within 1 s of time zero (ATS/ERS 2019, from memory)'],
  ['cough-late', 'flow dip and recovery after the first second (common practice)'],
  ['glottic-first-second', 'abrupt stop of flow within the first second (ATS/ERS 2019, from memory)'],
  ['glottic-late', 'abrupt stop of flow after the first second (ATS/ERS 2019, from memory)'],
  ['inspiration-during-blow', 'volume falls during the blow (common practice)'],
  ['zero-drift', 'volume drift while still before the blow (ATS/ERS 2019 zero-flow setting, from memory)'],
  ['hesitation-long', 'more than 2 s from full inspiration to time zero (ATS/ERS 2019, from memory)'],
  ['fivc-excess', 'FIVC - FVC above the greater of 0.100 L and 5 % FVC (ATS/ERS 2019, from memory)'],
  ['double-breath', 'a second forced expiration in the recording (common practice)'],
];

const SETTINGS: [number, SignalKind, Partial<EffortSpec>][] = [
  [100, 'volume', {}],
  [100, 'flow', { tidalBreaths: 2, inspirationAfter: true }],
  [1000, 'volume', { tidalBreaths: 2, inspirationAfter: true }],
  [1000, 'flow', {}],
];

describe('per-effort findings on synthetic curves', () => {
  const cases: [EffortFault, string, number, SignalKind, Partial<EffortSpec>][] = [];
  for (const [fault, rule] of FAULT_CASES) for (const [rate, signal, extra] of SETTINGS) cases.push([fault, rule, rate, signal, extra]);

  it.each(cases)('%s (%s) at %i Hz from %s', (fault, _rule, rate, signal, extra) => {
    const { recording, truth } = generateEffort({ sampleRateHz: rate, signal, faults: [fault], ...extra }, 11);
    const codes = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS).findings.map((f) => f.code);
    for (const code of truth.expectedFindings) expect(codes).toContain(code);
    const permitted = new Set<FindingCode>([...truth.expectedFindings, ...truth.allowedFindings]);
    expect(codes.filter((c) => !permitted.has(c))).toEqual([]);
  });

  it('the submaximal blow shows nothing per effort (it is judged against the session, common practice)', () => {
    const { recording } = generateEffort({ faults: ['submaximal'] }, 3);
    expect(analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS).findings).toEqual([]);
  });

  // False alarms are the worst failure for a reader: clean efforts of several builds,
  // rates, signal kinds and noise seeds must show no finding at all.
  const clean: [string, EffortSpec][] = [
    ['healthy adult', { pefLPerS: 8, fvcL: 5 }],
    ['small adult', { pefLPerS: 5.5, fvcL: 3.2, riseTimeS: 0.08, slowTauS: 1.2 }],
    ['mild obstruction', { pefLPerS: 4.5, fvcL: 3.8, riseTimeS: 0.12, slowFraction: 0.3, slowTauS: 2.2, blowDurationS: 14 }],
    ['child', { pefLPerS: 3.2, fvcL: 1.8, riseTimeS: 0.06, slowFraction: 0.1, slowTauS: 0.8 }],
  ];
  const cleanCases: [string, EffortSpec, number, SignalKind, number][] = [];
  for (const [name, spec] of clean)
    for (const [rate, signal] of [
      [100, 'volume'],
      [100, 'flow'],
      [1000, 'volume'],
      [1000, 'flow'],
    ] as const)
      for (const seed of [1, 2, 3]) cleanCases.push([name, spec, rate, signal, seed]);

  it.each(cleanCases)('clean %s at %i Hz from %s, seed %i: no finding', (_name, spec, rate, signal, seed) => {
    const extra = seed === 2 ? { tidalBreaths: 3, inspirationAfter: true } : seed === 3 ? { flowNoiseLPerS: 0.03 } : {};
    const { recording } = generateEffort({ ...spec, ...extra, sampleRateHz: rate, signal }, seed);
    const findings = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS).findings;
    expect(findings.map((f) => f.message)).toEqual([]);
  });

  it('explains BEV with its numbers and the limit rule', () => {
    const { recording, truth } = generateEffort({ faults: ['slow-start'], sampleRateHz: 1000 }, 5);
    const finding = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS).findings.find((f) => f.code === 'bev-excessive');
    expect(finding?.message).toMatch(/^BEV 0\.\d{3} L = \d+\.\d % of FVC; limit 0\.\d{3} L \(greater of 5 % of FVC and 0\.100 L\)$/);
    // Measured BEV within 0.015 L of the curve's own, both by the line through the point of peak flow with slope PEF
    // (ATS/ERS 2019, from memory); sensor noise moves the measured peak slightly.
    expect(Math.abs((finding?.values['bevL'] ?? 0) - truth.bevL)).toBeLessThan(0.015);
  });

  it('names the first-second glottic stop with its time after time zero', () => {
    const { recording } = generateEffort({ faults: ['glottic-first-second'] }, 5);
    const finding = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS).findings.find((f) => f.code === 'glottic-stop-first-second');
    // The generator closes the glottis 0.60 s after time zero (synthetic/blow-shape.ts).
    expect(finding?.values['atS']).toBeGreaterThan(0.55);
    expect(finding?.values['atS']).toBeLessThan(0.7);
  });

  it('takes the BEV limit from the parameters: a looser rule removes the finding', () => {
    const { recording } = generateEffort({ faults: ['slow-start'] }, 5);
    const loose = { ...DEFAULT_ENGINE_PARAMETERS, bevMaxL: 1 };
    expect(analyzeRecording(recording, loose).findings.map((f) => f.code)).not.toContain('bev-excessive');
  });
});
