import type { ReadResult } from '../../shared/contracts/reading.js';
import type { FindingCode, Verdict } from '../../shared/spirometry/model.js';

/**
 * Plain coaching words for the site, per finding code: what went wrong, then what to do next time.
 * Our wording; the findings themselves are described in shared/spirometry/finding-codes.ts.
 */
export const COACHING_BY_FINDING: Readonly<Record<FindingCode, string>> = {
  'bev-excessive': 'Slow start: coach a faster, more forceful blast from full inspiration.',
  'hesitation-long': 'Long pause before the blow: once the lungs are full, coach the subject to blast out without delay.',
  'end-early': 'Ended early: encourage the subject to keep blowing until told to stop.',
  'cough-first-second':
    'Cough in the first second: let the subject rest, clear the throat or sip water, then repeat the effort.',
  'cough-late': 'Cough later in the blow: check the subject is comfortable and coach one smooth, unbroken blow.',
  'glottic-stop-first-second':
    'Throat closed early in the blow: coach the subject to keep the throat open and blow out without stopping.',
  'glottic-stop-late':
    'Blow stopped abruptly: encourage the subject to keep the throat open and keep emptying the lungs until told to stop.',
  'blow-submaximal': "Weaker blow than the subject's best: encourage a maximal effort on every blow.",
  'peak-late': 'Peak flow came late: coach an explosive start, as hard and fast as possible from the first instant.',
  'zero-drift':
    "Baseline drift: set the spirometer's zero while no air moves through the sensor, and check the device before the next effort.",
  'inspiration-during-blow': 'Breath in during the blow: coach one continuous blow out, with no breath in until told.',
  'double-breath': 'Two blows in one recording: record one blow per effort and start a new effort for each attempt.',
  'fivc-exceeds-fvc': 'Not a full breath in before the blow: coach the subject to fill the lungs completely before blasting out.',
};

const VERDICT_WORDS: Readonly<Record<Verdict, string>> = {
  acceptable: 'acceptable',
  usable: 'usable only',
  not_acceptable: 'not acceptable',
};

/** Whether a string is one of our finding codes. */
export function isFindingCode(code: string): code is FindingCode {
  return Object.hasOwn(COACHING_BY_FINDING, code);
}

/**
 * Coaching lines for one effort from the reader's findings and verdicts. Codes we do not know are
 * skipped; an effort judged below acceptable with no known finding still gets one line saying so.
 */
export function coachingForEffort(findings: readonly string[], fev1Verdict: Verdict, fvcVerdict: Verdict): string[] {
  const lines = [...new Set(findings)].filter(isFindingCode).map((code) => COACHING_BY_FINDING[code]);
  if (lines.length > 0) return lines;
  const below = [
    fev1Verdict !== 'acceptable' ? `FEV1 ${VERDICT_WORDS[fev1Verdict]}` : null,
    fvcVerdict !== 'acceptable' ? `FVC ${VERDICT_WORDS[fvcVerdict]}` : null,
  ].filter((part): part is string => part !== null);
  return below.length ? [`${below.join(', ')}: see the over-reader's comment for what to change.`] : [];
}

/** Grades below C do not meet the repeatability the study hopes for (ATS/ERS 2019 (Graham et al. 2019), Table 10). */
const WEAK_GRADES = new Set(['D', 'E', 'U', 'F']);

/** Coaching lines for the whole session, from its grades and endpoint eligibility. */
export function coachingForSession(result: ReadResult): string[] {
  const lines: string[] = [];
  if (result.fev1Grade === 'F' && result.fvcGrade === 'F') {
    lines.push('No acceptable or usable effort: review the manoeuvre with the subject before the next visit, demonstrate it, and coach each step.');
  } else if (WEAK_GRADES.has(result.fev1Grade) || WEAK_GRADES.has(result.fvcGrade)) {
    lines.push(
      'Too few acceptable efforts that agree: aim for at least three acceptable efforts whose two largest FEV1 and FVC values agree closely (up to eight efforts may be tried).',
    );
  }
  const ineligible = [!result.endpointEligible.fev1 ? 'FEV1' : null, !result.endpointEligible.fvc ? 'FVC' : null].filter(
    (part): part is string => part !== null,
  );
  if (ineligible.length) {
    const reasons = result.endpointEligible.reasons.length ? ` (${result.endpointEligible.reasons.join('; ')})` : '';
    lines.push(`${ineligible.join(' and ')} cannot count for the study endpoint${reasons}.`);
  }
  return lines;
}
