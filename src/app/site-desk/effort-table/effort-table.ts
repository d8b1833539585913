import { DecimalPipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, input, output } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatTableModule } from '@angular/material/table';

import type { EffortSummary } from '@shared/contracts/sessions';
import { VERDICT_LABELS, type Verdict } from '../session-labels';

/**
 * The engine's first pass over each effort: values, suggested verdicts in words and why, and its
 * findings. Choosing an effort highlights it on the curves.
 */
@Component({
  selector: 'app-effort-table',
  imports: [DecimalPipe, MatButton, MatIcon, MatTableModule],
  templateUrl: './effort-table.html',
  styleUrl: './effort-table.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class EffortTable {
  readonly efforts = input.required<readonly EffortSummary[]>();
  readonly highlightedIndex = input<number | null>(null);
  readonly effortSelected = output<number>();

  protected readonly columns = ['label', 'fev1', 'fvc', 'pef', 'fet', 'bev', 'fev1Verdict', 'fvcVerdict', 'findings'] as const;
  protected verdictLabel(verdict: Verdict) {
    return VERDICT_LABELS[verdict];
  }

  /** A click anywhere on the row chooses it; the button in the first cell serves the keyboard. */
  protected selectFromRow(effort: EffortSummary, event: Event): void {
    if ((event.target as HTMLElement | null)?.closest('button')) return;
    this.effortSelected.emit(effort.index);
  }
}
