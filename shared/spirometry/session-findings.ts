/**
 * Session-level passes over efforts analysed one by one: the checks that need
 * the other efforts of the set (EOFE criterion 3, submaximal blow).
 */
import type { EffortMetrics, Finding } from './model.js';
import type { ResolvedProtocol } from './protocol.js';
import { repeatabilityToleranceMl, toWholeMl } from './session-grade.js';

/** One effort as the per-effort analysis left it. */
export interface EffortEvidence {
  readonly metrics: EffortMetrics;
  readonly findings: readonly Finding[];
}

/**
 * EOFE criterion 3 (ATS/ERS 2019, from memory): an effort whose FVC is greater
 * than, or within the repeatability tolerance of, the largest FVC observed in
 * the earlier efforts of the session has ended its forced expiration. Sets
 * `endOfTest.repeatsPriorFvc` (and `met`) and drops an `end-early` finding
 * that the effort alone had raised. Compared in whole millilitres.
 */
export function applyRepeatsPriorFvc(
  efforts: readonly EffortEvidence[],
  protocol: ResolvedProtocol,
  ageYears?: number,
): EffortEvidence[] {
  if (!protocol.session.eofeRepeatsPriorFvc) return efforts.slice();
  let largestPriorFvcL: number | null = null;
  return efforts.map((effort) => {
    const { metrics } = effort;
    let result = effort;
    if (largestPriorFvcL !== null && Number.isFinite(metrics.fvcL)) {
      const toleranceMl = repeatabilityToleranceMl(protocol, largestPriorFvcL, ageYears);
      const repeats = toWholeMl(metrics.fvcL) >= toWholeMl(largestPriorFvcL) - toleranceMl;
      if (repeats) {
        result = {
          metrics: { ...metrics, endOfTest: { ...metrics.endOfTest, repeatsPriorFvc: true, met: true } },
          findings: effort.findings.filter((finding) => finding.code !== 'end-early'),
        };
      }
    }
    if (Number.isFinite(metrics.fvcL) && (largestPriorFvcL === null || metrics.fvcL > largestPriorFvcL)) {
      largestPriorFvcL = metrics.fvcL;
    }
    return result;
  });
}

/**
 * Flags efforts whose PEF is below the protocol's fraction of the session's best
 * PEF (`blow-submaximal`, common practice). Needs at least two efforts. It matters
 * most in airflow obstruction: a softer blow compresses the airways less and can
 * give a larger FEV1 (negative effort dependence), which would then be reported as
 * the largest acceptable FEV1 unless the reader sees that the blow was submaximal.
 */
export function applySubmaximalBlow(efforts: readonly EffortEvidence[], protocol: ResolvedProtocol): EffortEvidence[] {
  const limitFraction = protocol.engine.submaximalPefFraction;
  const pefs = efforts.map((effort) => effort.metrics.pefLPerS).filter((pef) => Number.isFinite(pef) && pef > 0);
  if (pefs.length < 2) return efforts.slice();
  const bestPefLPerS = Math.max(...pefs);
  return efforts.map((effort) => {
    const pefLPerS = effort.metrics.pefLPerS;
    if (!(pefLPerS < limitFraction * bestPefLPerS)) return effort;
    if (effort.findings.some((finding) => finding.code === 'blow-submaximal')) return effort;
    const fractionOfBest = pefLPerS / bestPefLPerS;
    const finding: Finding = {
      code: 'blow-submaximal',
      message:
        `PEF ${pefLPerS.toFixed(2)} L/s = ${(100 * fractionOfBest).toFixed(0)} % of the session's best PEF ` +
        `${bestPefLPerS.toFixed(2)} L/s; limit ${(100 * limitFraction).toFixed(0)} %`,
      values: { pefLPerS, bestPefLPerS, fractionOfBest, limitFraction },
    };
    return { metrics: effort.metrics, findings: [...effort.findings, finding] };
  });
}

/** Runs every session-level pass, in order. */
export function applySessionFindings(
  efforts: readonly EffortEvidence[],
  protocol: ResolvedProtocol,
  ageYears?: number,
): EffortEvidence[] {
  return applySubmaximalBlow(applyRepeatsPriorFvc(efforts, protocol, ageYears), protocol);
}
