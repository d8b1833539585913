import { describe, expect, it } from '@jest/globals';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { judgeEffort } from './acceptability.js';
import { DEFAULT_ENGINE_PARAMETERS, analyzeRecording } from './effort-analysis.js';
import type { FindingCode, SignalKind, Verdict } from './model.js';
import { resolveProtocol } from './protocol.js';
import { type EffortFault, generateEffort } from './synthetic/curve-generator.js';
import { obstructiveEffortSpec } from './synthetic/obstructive-effort.js';
import { obstructiveContext, table7Verdicts } from './testing/acceptability-table.js';

/**
 * Obstructive (moderate COPD) efforts from the seeded generator (synthetic/obstructive-effort.ts),
 * each with one fault, at 100 Hz and 1000 Hz, from volume and flow: the fault's own finding and
 * the verdicts of ATS/ERS 2019 Table 7 (engine.md section 3, reconstructed from memory).
 */
const protocol = resolveProtocol(JSON.parse(readFileSync(path.resolve('protocols/ats-ers-2019.v1.json'), 'utf8')));

/**
 * Each fault, the finding it must show, the verdicts Table 7 gives when nothing else is wrong, and
 * the findings that come with the fault by its nature without changing those verdicts (a soft start
 * also peaks late; a drifting zero or a closure also leaves no plateau).
 */
const FAULTS: [EffortFault, FindingCode | null, Verdict, Verdict, FindingCode[]][] = [
  // BEV row: required for every column -> both not acceptable.
  ['slow-start', 'bev-excessive', 'not_acceptable', 'not_acceptable', ['peak-late']],
  // Outside Table 7 (common practice): a finding for the reader, no verdict change.
  ['late-peak', 'peak-late', 'acceptable', 'acceptable', []],
  // EOFE row (required for an acceptable FVC only): FVC usable, FEV1 acceptable. The subject gives up after 3-5 s.
  ['early-end', 'end-early', 'acceptable', 'usable', []],
  // Cough in the first second (required for FEV1 only): FEV1 not acceptable, FVC acceptable.
  ['cough-first-second', 'cough-first-second', 'not_acceptable', 'acceptable', []],
  ['cough-late', 'cough-late', 'acceptable', 'acceptable', []],
  // Glottic closure in the first second: required for every column -> both not acceptable.
  ['glottic-first-second', 'glottic-stop-first-second', 'not_acceptable', 'not_acceptable', ['end-early']],
  // Glottic closure after the first second (required for an acceptable FVC): FVC usable, FEV1 acceptable.
  ['glottic-late', 'glottic-stop-late', 'acceptable', 'usable', ['end-early']],
  ['inspiration-during-blow', 'inspiration-during-blow', 'acceptable', 'acceptable', []],
  // Faulty zero-flow setting: required for every column.
  ['zero-drift', 'zero-drift', 'not_acceptable', 'not_acceptable', ['end-early']],
  ['hesitation-long', 'hesitation-long', 'acceptable', 'acceptable', []],
  // FIVC check (required for acceptable, not for usable): both usable.
  ['fivc-excess', 'fivc-exceeds-fvc', 'usable', 'usable', []],
  ['double-breath', 'double-breath', 'acceptable', 'acceptable', []],
  // Submaximal is judged against the session's best PEF (obstructive-session.spec.ts): nothing per effort.
  ['submaximal', null, 'acceptable', 'acceptable', []],
];

const FAULT_SETTINGS: [number, number][] = [
  // [rate, seeds], signal alternating by seed.
  [100, 30],
  [1000, 6],
];

describe('obstructive efforts with one fault: its own finding, and the Table 7 verdicts', () => {
  const cases: [EffortFault, number, number, FindingCode | null, Verdict, Verdict, FindingCode[]][] = [];
  for (const [fault, code, fev1, fvc, companions] of FAULTS) for (const [rate, seeds] of FAULT_SETTINGS) cases.push([fault, rate, seeds, code, fev1, fvc, companions]);

  it.each(cases)('%s at %i Hz over %i seeds', (fault, rate, seeds, code, fev1Verdict, fvcVerdict, companions) => {
    const problems: string[] = [];
    let alone = 0;
    for (let seed = 1; seed <= seeds; seed++) {
      const signal: SignalKind = seed % 2 === 0 ? 'flow' : 'volume';
      const timing = fault === 'early-end' ? { faultTimesS: { earlyEnd: 3 + (seed % 3) } } : {};
      const spec = obstructiveEffortSpec(seed + 1000, { sampleRateHz: rate, signal, faults: [fault], ...obstructiveContext(seed), ...timing });
      const { recording, truth } = generateEffort(spec, seed);
      const { metrics, findings } = analyzeRecording(recording, DEFAULT_ENGINE_PARAMETERS);
      const codes = findings.map((f) => f.code);
      const missing = truth.expectedFindings.filter((c) => !codes.includes(c));
      const permitted = new Set<FindingCode>([...truth.expectedFindings, ...truth.allowedFindings]);
      const extraCodes = codes.filter((c) => !permitted.has(c));
      if (missing.length > 0 || extraCodes.length > 0) {
        problems.push(`seed ${seed} (${signal}): missing [${missing.join(', ')}], unexpected ${findings.filter((f) => extraCodes.includes(f.code)).map((f) => f.message).join('; ')}`);
      }
      const verdicts = judgeEffort(metrics, findings, protocol, 65);
      // Whatever else the fault brought (e.g. a closure that also shrinks FVC below the BEV limit), the verdicts follow Table 7.
      const fromTable = table7Verdicts(codes);
      if (verdicts.fev1.verdict !== fromTable.fev1 || verdicts.fvc.verdict !== fromTable.fvc) {
        problems.push(`seed ${seed}: verdicts ${verdicts.fev1.verdict}/${verdicts.fvc.verdict}, Table 7 gives ${fromTable.fev1}/${fromTable.fvc} for [${codes.join(', ')}]`);
      }
      const own = codes.filter((c) => !companions.includes(c));
      const onlyItsOwn = code === null ? codes.length === 0 : own.length === 1 && own[0] === code;
      if (onlyItsOwn) {
        alone++;
        if (verdicts.fev1.verdict !== fev1Verdict || verdicts.fvc.verdict !== fvcVerdict) {
          problems.push(`seed ${seed}: alone, ${fault} gave ${verdicts.fev1.verdict}/${verdicts.fvc.verdict}`);
        }
      }
    }
    expect(problems).toEqual([]);
    // The fault shows alone on most curves, so that the row's own verdicts above were checked.
    expect(alone).toBeGreaterThanOrEqual(Math.ceil(0.8 * seeds));
  });
});
