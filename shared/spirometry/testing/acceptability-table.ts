/**
 * ATS/ERS 2019 Table 7 as reconstructed in engine.md section 3 (Graham 2019, from memory), written
 * out for tests independently of the protocol rule set, and the recording context the obstructive
 * effort specs vary by seed.
 */
import type { FindingCode, Verdict } from '../model.js';
import type { EffortSpec } from '../synthetic/curve-generator.js';

/**
 * For each finding, whether the criterion it fails is
 * required for [acceptable FEV1, acceptable FVC, usable FEV1, usable FVC]. Findings not listed
 * are outside the table (the reader's judgement).
 */
export const TABLE_7: Partial<Record<FindingCode, readonly [boolean, boolean, boolean, boolean]>> = {
  'bev-excessive': [true, true, true, true],
  'zero-drift': [true, true, true, true],
  'cough-first-second': [true, false, true, false],
  'glottic-stop-first-second': [true, true, true, true],
  'glottic-stop-late': [false, true, false, false],
  'end-early': [false, true, false, false], // EOFE met
  'fivc-exceeds-fvc': [true, true, false, false],
};

/** Verdicts that Table 7 gives for a set of findings. */
export function table7Verdicts(codes: readonly FindingCode[]): { fev1: Verdict; fvc: Verdict } {
  const verdict = (acceptableColumn: 0 | 1, usableColumn: 2 | 3): Verdict => {
    const rows = codes.map((code) => TABLE_7[code]).filter((row) => row !== undefined);
    if (rows.some((row) => row[usableColumn])) return 'not_acceptable';
    return rows.some((row) => row[acceptableColumn]) ? 'usable' : 'acceptable';
  };
  return { fev1: verdict(0, 2), fvc: verdict(1, 3) };
}

/** Recording context varied by seed: tidal breaths before, a full inspiration after, pause length. */
export function obstructiveContext(seed: number): Partial<EffortSpec> {
  return { tidalBreaths: seed % 3, inspirationAfter: seed % 2 === 0, pauseS: 0.2 + 0.3 * (seed % 4) };
}

