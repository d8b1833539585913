import * as z from 'zod';

import type { EffortVerdict } from '@shared/contracts/reading';
import type { EffortMetrics } from '@shared/spirometry/model';
import { ProtocolRuleSetError, resolveProtocol, type ResolvedProtocol } from '@shared/spirometry/protocol';
import { summarizeRead, type ReadSummary } from '@shared/spirometry/read-summary';
import type { ReadEffort } from './read-draft';

/** The study's protocol, ready for the engine, or why it cannot be used. */
export type ProtocolState =
  | { readonly ok: true; readonly protocol: ResolvedProtocol }
  | { readonly ok: false; readonly problem: string };

/** The live result of a draft, or why it cannot be computed in the browser. */
export type LiveResult = { readonly ok: true; readonly summary: ReadSummary } | { readonly ok: false; readonly problem: string };

/** The metrics the session result is computed from (the engine's `EffortMetrics` names). */
const gradedMetricsSchema = z.object({
  fev1L: z.number().nullable(),
  fvcL: z.number(),
  pefLPerS: z.number(),
  fef2575LPerS: z.number().nullable(),
  fev6L: z.number().nullable(),
});

/** Resolves the rule set the server sent with the read. */
export function protocolOf(ruleSet: unknown): ProtocolState {
  try {
    return { ok: true, protocol: resolveProtocol(ruleSet) };
  } catch (error: unknown) {
    // A rule set the engine refuses: say so and keep the page usable; the server grades at signing.
    if (!(error instanceof ProtocolRuleSetError)) throw error;
    return { ok: false, problem: `The study's protocol rules could not be read here (${error.message}).` };
  }
}

/**
 * Grades, reported values and endpoint eligibility of the draft verdicts, by the same shared
 * engine function the server runs when the read is saved and signed.
 */
export function liveResultOf(
  efforts: readonly ReadEffort[],
  verdicts: readonly EffortVerdict[],
  protocol: ProtocolState,
  ageYears: number,
): LiveResult {
  if (!protocol.ok) return protocol;
  const judged = [];
  for (const effort of efforts) {
    const metrics = gradedMetricsSchema.safeParse(effort.metrics);
    if (!metrics.success) {
      return { ok: false, problem: `${effort.label} lacks the values the grades need, so they cannot be worked out here.` };
    }
    const verdict = verdicts.find((candidate) => candidate.effortIndex === effort.index);
    if (!verdict) continue;
    judged.push({
      index: effort.index,
      // summarizeRead reads only the values checked above; the rest of EffortMetrics is not needed.
      metrics: effort.metrics as unknown as EffortMetrics,
      fev1Verdict: verdict.fev1Verdict,
      fvcVerdict: verdict.fvcVerdict,
    });
  }
  return { ok: true, summary: summarizeRead(judged, protocol.protocol, ageYears) };
}

/** A numeric metric of an effort, or null when the engine gave none. */
export function metricOf(effort: ReadEffort, name: string): number | null {
  const value = effort.metrics[name];
  return typeof value === 'number' && Number.isFinite(value) ? value : null;
}
