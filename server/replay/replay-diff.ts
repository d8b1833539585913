/**
 * What changes when a study's stored sessions are judged under another rule set: efforts whose
 * suggested verdict moves, sessions whose grade or endpoint eligibility moves, and the tallies.
 * Pure: the service reads the files and runs the engine.
 */
import type {
  ReplayCounts,
  ReplayEffortChange,
  ReplayProblem,
  ReplaySessionChange,
  VerdictTransition,
} from '../../shared/contracts/protocols.js';
import type { Grade, Verdict } from '../../shared/spirometry/model.js';
import type { SessionAnalysis } from '../../shared/spirometry/session-analysis.js';

/** Where a session sits in the study. */
export interface SessionCodes {
  readonly sessionId: string;
  readonly siteNumber: string;
  readonly subjectCode: string;
  readonly visitCode: string;
  readonly timepointCode: string;
  readonly bronchodilator: 'pre' | 'post';
}

/** The parts of one analysis a replay compares. */
export interface SessionOutcome {
  readonly efforts: readonly { readonly index: number; readonly label: string; readonly fev1: Verdict; readonly fvc: Verdict }[];
  readonly fev1Grade: Grade;
  readonly fvcGrade: Grade;
  readonly endpoint: { readonly fev1: boolean; readonly fvc: boolean };
}

/** What was stored at upload time: the suggestions and grades the readers see. */
export interface StoredSuggestions {
  readonly efforts: readonly { readonly index: number; readonly fev1: string; readonly fvc: string }[];
  readonly fev1Grade: string | null;
  readonly fvcGrade: string | null;
}

/** One session analysed under the study's rule set and under the target. */
export interface ReplayedSession {
  readonly codes: SessionCodes;
  readonly stored: StoredSuggestions;
  readonly current: SessionOutcome;
  readonly target: SessionOutcome;
}

/** The differences found over all replayed sessions. */
export interface ReplayDifferences {
  readonly counts: ReplayCounts;
  readonly verdictTransitions: VerdictTransition[];
  readonly effortChanges: ReplayEffortChange[];
  readonly sessionChanges: ReplaySessionChange[];
}

const VERDICT_ORDER: readonly Verdict[] = ['acceptable', 'usable', 'not_acceptable'];
const VALUES = [
  ['FEV1', 'fev1'],
  ['FVC', 'fvc'],
] as const;

/** The compared parts of a session analysis. */
export function outcomeOf(analysis: SessionAnalysis): SessionOutcome {
  return {
    efforts: analysis.efforts.map((effort) => ({
      index: effort.index,
      label: effort.label,
      fev1: effort.verdicts.fev1.verdict,
      fvc: effort.verdicts.fvc.verdict,
    })),
    fev1Grade: analysis.fev1.grade,
    fvcGrade: analysis.fvc.grade,
    endpoint: { fev1: analysis.endpoint.fev1, fvc: analysis.endpoint.fvc },
  };
}

/**
 * Compares each session's current outcome with its target outcome (efforts paired by index: both
 * come from the same recordings), and the stored suggestions with the current re-run.
 */
export function diffReplay(sessions: readonly ReplayedSession[], problems: readonly ReplayProblem[]): ReplayDifferences {
  const effortChanges: ReplayEffortChange[] = [];
  const sessionChanges: ReplaySessionChange[] = [];
  const transitions = new Map<string, VerdictTransition>();
  let effortCount = 0;
  let storedVerdictsDiffering = 0;
  let storedGradesDiffering = 0;
  let sessionsWithGradeChange = 0;
  let sessionsWithEndpointChange = 0;

  for (const { codes, stored, current, target } of sessions) {
    effortCount += current.efforts.length;
    storedVerdictsDiffering += storedVerdictDifferences(stored, current);
    if (stored.fev1Grade !== current.fev1Grade || stored.fvcGrade !== current.fvcGrade) storedGradesDiffering++;

    const targetByIndex = new Map(target.efforts.map((effort) => [effort.index, effort]));
    for (const before of current.efforts) {
      const after = targetByIndex.get(before.index);
      if (!after || (before.fev1 === after.fev1 && before.fvc === after.fvc)) continue;
      effortChanges.push({
        ...codes,
        effortIndex: before.index,
        effortLabel: before.label,
        fev1: { from: before.fev1, to: after.fev1 },
        fvc: { from: before.fvc, to: after.fvc },
      });
      for (const [value, key] of VALUES) {
        if (before[key] === after[key]) continue;
        const id = `${value}:${before[key]}:${after[key]}`;
        const tally = transitions.get(id) ?? { value, from: before[key], to: after[key], count: 0 };
        transitions.set(id, { ...tally, count: tally.count + 1 });
      }
    }

    const gradeChanged = current.fev1Grade !== target.fev1Grade || current.fvcGrade !== target.fvcGrade;
    const endpointChanged = current.endpoint.fev1 !== target.endpoint.fev1 || current.endpoint.fvc !== target.endpoint.fvc;
    if (gradeChanged) sessionsWithGradeChange++;
    if (endpointChanged) sessionsWithEndpointChange++;
    if (gradeChanged || endpointChanged) {
      sessionChanges.push({
        ...codes,
        fev1Grade: { from: current.fev1Grade, to: target.fev1Grade },
        fvcGrade: { from: current.fvcGrade, to: target.fvcGrade },
        fev1Endpoint: { from: current.endpoint.fev1, to: target.endpoint.fev1 },
        fvcEndpoint: { from: current.endpoint.fvc, to: target.endpoint.fvc },
      });
    }
  }

  return {
    counts: {
      sessionsReplayed: sessions.length,
      efforts: effortCount,
      effortsChanged: effortChanges.length,
      sessionsWithGradeChange,
      sessionsWithEndpointChange,
      storedVerdictsDiffering,
      storedGradesDiffering,
      sessionsWithProblems: new Set(problems.map((problem) => problem.sessionId)).size,
    },
    verdictTransitions: [...transitions.values()].sort(
      (a, b) =>
        a.value.localeCompare(b.value) ||
        VERDICT_ORDER.indexOf(a.from) - VERDICT_ORDER.indexOf(b.from) ||
        VERDICT_ORDER.indexOf(a.to) - VERDICT_ORDER.indexOf(b.to),
    ),
    effortChanges,
    sessionChanges,
  };
}

/** Efforts whose stored FEV1 or FVC suggestion is not what the current rule set gives now (a missing effort counts). */
function storedVerdictDifferences(stored: StoredSuggestions, current: SessionOutcome): number {
  const storedByIndex = new Map(stored.efforts.map((effort) => [effort.index, effort]));
  let differing = Math.max(0, stored.efforts.length - current.efforts.length);
  for (const effort of current.efforts) {
    const before = storedByIndex.get(effort.index);
    if (!before || before.fev1 !== effort.fev1 || before.fvc !== effort.fvc) differing++;
  }
  return differing;
}
