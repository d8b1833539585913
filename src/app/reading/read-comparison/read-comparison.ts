import { ChangeDetectionStrategy, Component, computed, input, output } from '@angular/core';
import { MatIcon } from '@angular/material/icon';

import type { AdjudicationView } from '@shared/contracts/reading';
import type { ReadEffort } from '../read-draft';
import { VERDICT_LABELS, type Verdict } from '../read-labels';

/** The earlier reads an adjudicator compares, labelled "Read A" and "Read B", and where they differ. */
export type ComparedReads = Pick<AdjudicationView, 'compared' | 'differences'>;

/** One effort's verdicts in one compared read, and whether the reads disagree on them. */
interface ComparedCell {
  readonly fev1: Verdict | null;
  readonly fvc: Verdict | null;
  readonly fev1Differs: boolean;
  readonly fvcDiffers: boolean;
}

/**
 * Two independent reads side by side for the adjudicator: effort verdicts (cells where the
 * reads disagree highlighted and said in words), results and feedback texts, and the server's
 * list of differences. Readers are never named.
 */
@Component({
  selector: 'app-read-comparison',
  imports: [MatIcon],
  templateUrl: './read-comparison.html',
  styleUrl: './read-comparison.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReadComparison {
  readonly comparison = input.required<ComparedReads>();
  readonly efforts = input.required<readonly ReadEffort[]>();
  readonly selectedIndex = input<number | null>(null);
  readonly effortSelected = output<number>();

  protected readonly verdictLabels = VERDICT_LABELS;

  protected readonly reads = computed(() => {
    const compared = this.comparison().compared;
    const verdictOf = (read: number, effortIndex: number) => compared[read]?.verdicts.find((verdict) => verdict.effortIndex === effortIndex);
    return compared.map((read, position) => ({
      ...read,
      rows: this.efforts().map((effort) => {
        const own = verdictOf(position, effort.index);
        const others = compared.map((_, other) => verdictOf(other, effort.index)).filter((verdict) => verdict !== own);
        const cell: ComparedCell = {
          fev1: own?.fev1Verdict ?? null,
          fvc: own?.fvcVerdict ?? null,
          fev1Differs: others.some((other) => other?.fev1Verdict !== own?.fev1Verdict),
          fvcDiffers: others.some((other) => other?.fvcVerdict !== own?.fvcVerdict),
        };
        return { effort, cell };
      }),
    }));
  });
}
