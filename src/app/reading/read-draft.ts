import type { EffortVerdict, ReadWorkspace, SaveRead } from '@shared/contracts/reading';
import type { Measure, Verdict } from './read-labels';

/** One effort as the server sends it to the reader. */
export type ReadEffort = ReadWorkspace['efforts'][number];

/** What the reader has on screen: a verdict for every effort and the feedback for the site. */
export interface ReadDraft {
  readonly verdicts: readonly EffortVerdict[];
  readonly feedbackText: string;
}

/**
 * The draft of a read as loaded: the reader's saved verdicts, and the engine's suggestions
 * (verdicts and finding codes) for any effort not judged yet.
 */
export function draftOf(workspace: ReadWorkspace): ReadDraft {
  const saved = new Map(workspace.verdicts.map((verdict) => [verdict.effortIndex, verdict]));
  return {
    verdicts: workspace.efforts.map((effort) => saved.get(effort.index) ?? suggestedVerdict(effort)),
    feedbackText: workspace.feedbackText,
  };
}

/** The engine's suggestion for one effort, as a verdict the reader can keep or change. */
export function suggestedVerdict(effort: ReadEffort): EffortVerdict {
  return {
    effortIndex: effort.index,
    fev1Verdict: effort.suggestedFev1Verdict,
    fvcVerdict: effort.suggestedFvcVerdict,
    findings: [...new Set(effort.findings.map((finding) => finding.code))],
    comment: '',
  };
}

/** The suggestion of the engine for one measure of an effort. */
export function suggestionFor(effort: ReadEffort, measure: Measure): Verdict {
  return measure === 'fev1' ? effort.suggestedFev1Verdict : effort.suggestedFvcVerdict;
}

/** The reader's verdict on one measure. */
export function verdictFor(verdict: EffortVerdict, measure: Measure): Verdict {
  return measure === 'fev1' ? verdict.fev1Verdict : verdict.fvcVerdict;
}

/** The draft with one effort's verdict changed by `change`. */
export function updateEffort(draft: ReadDraft, effortIndex: number, change: (verdict: EffortVerdict) => EffortVerdict): ReadDraft {
  return {
    ...draft,
    verdicts: draft.verdicts.map((verdict) => (verdict.effortIndex === effortIndex ? change(verdict) : verdict)),
  };
}

/** The draft with the FEV1 or FVC verdict of one effort set. */
export function withVerdict(draft: ReadDraft, effortIndex: number, measure: Measure, value: Verdict): ReadDraft {
  return updateEffort(draft, effortIndex, (verdict) =>
    measure === 'fev1' ? { ...verdict, fev1Verdict: value } : { ...verdict, fvcVerdict: value },
  );
}

/** The draft with a finding code ticked or unticked on one effort. */
export function withFinding(draft: ReadDraft, effortIndex: number, code: string, ticked: boolean): ReadDraft {
  return updateEffort(draft, effortIndex, (verdict) => {
    const others = verdict.findings.filter((finding) => finding !== code);
    return { ...verdict, findings: ticked ? [...others, code] : others };
  });
}

/**
 * Whether the draft differs from what the server holds. Suggestions pre-filled for efforts the
 * server holds no verdict on count as changes: they are on screen but not saved yet.
 */
export function draftChanged(workspace: ReadWorkspace, draft: ReadDraft): boolean {
  const saved = new Set(workspace.verdicts.map((verdict) => verdict.effortIndex));
  if (workspace.efforts.some((effort) => !saved.has(effort.index))) return true;
  return JSON.stringify(saveBodyOf(draftOf(workspace), workspace.version)) !== JSON.stringify(saveBodyOf(draft, workspace.version));
}

/** The `PUT` body of a draft based on `version`. */
export function saveBodyOf(draft: ReadDraft, version: number): SaveRead {
  return {
    version,
    verdicts: draft.verdicts.map((verdict) => ({ ...verdict, findings: [...verdict.findings].sort() })),
    feedbackText: draft.feedbackText,
  };
}

/** The number of the effort verdicts (FEV1 and FVC) the reader set differently from the engine. */
export function overrideCount(efforts: readonly ReadEffort[], draft: ReadDraft): number {
  let count = 0;
  for (const effort of efforts) {
    const verdict = draft.verdicts.find((candidate) => candidate.effortIndex === effort.index);
    if (!verdict) continue;
    if (verdict.fev1Verdict !== effort.suggestedFev1Verdict) count++;
    if (verdict.fvcVerdict !== effort.suggestedFvcVerdict) count++;
  }
  return count;
}
