import { ChangeDetectionStrategy, Component, computed, input } from '@angular/core';
import { MatIcon } from '@angular/material/icon';

import type { ReadResult } from '@shared/contracts/reading';
import type { Repeatability } from '@shared/spirometry/session-grade';
import type { LiveResult } from '../live-result';
import type { ReadEffort } from '../read-draft';
import { gradeText } from '../read-labels';

/**
 * The session result that follows from the reader's verdicts, recomputed in the browser as they
 * change: grades with the numbers behind them, reported values and endpoint eligibility. The
 * result as last saved by the server is shown beside it.
 */
@Component({
  selector: 'app-read-result-panel',
  imports: [MatIcon],
  templateUrl: './read-result-panel.html',
  styleUrl: './read-result-panel.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReadResultPanel {
  readonly live = input.required<LiveResult>();
  readonly efforts = input.required<readonly ReadEffort[]>();
  /** The result as the server computed it at the last save. */
  readonly saved = input<ReadResult | null>(null);

  protected readonly gradeText = gradeText;

  protected readonly problem = computed(() => {
    const live = this.live();
    return live.ok ? null : live.problem;
  });

  protected readonly view = computed(() => {
    const live = this.live();
    if (!live.ok) return null;
    const { fev1, fvc, reported, endpoint } = live.summary;
    const labelOf = (index: number | null) => this.efforts().find((effort) => effort.index === index)?.label ?? null;
    const selected = (value: { valueL: number; effortIndex: number; fromUsable: boolean } | null) =>
      value === null
        ? 'none'
        : `${value.valueL.toFixed(2)} L from ${labelOf(value.effortIndex)}${value.fromUsable ? ' (usable only)' : ''}`;
    return {
      grades: [
        { name: 'FEV1', testId: 'live-fev1-grade', repeatability: fev1, detail: repeatabilityText(fev1) },
        { name: 'FVC', testId: 'live-fvc-grade', repeatability: fvc, detail: repeatabilityText(fvc) },
      ],
      reportedFev1: selected(reported.fev1),
      reportedFvc: selected(reported.fvc),
      ratio: reported.fev1FvcRatio === null ? 'none' : `${Math.round(reported.fev1FvcRatio * 100)} %`,
      bestEffort: labelOf(reported.bestEffortIndex) ?? 'none',
      pef: reported.pefLPerS === null ? 'none' : `${reported.pefLPerS.toFixed(2)} L/s`,
      fef2575: reported.fef2575LPerS === null ? 'none' : `${reported.fef2575LPerS.toFixed(2)} L/s`,
      endpoint,
    };
  });
}

/** `3 acceptable, 1 usable; the two largest differ by 40 mL (A/B within 150 mL)`. */
function repeatabilityText(grade: Repeatability): string {
  const counts = `${grade.acceptableCount} acceptable, ${grade.usableCount} usable`;
  if (grade.differenceMl === null) return counts;
  return `${counts}; the two largest differ by ${grade.differenceMl} mL (A/B within ${Math.round(grade.tolerancesMl.ab)} mL)`;
}
