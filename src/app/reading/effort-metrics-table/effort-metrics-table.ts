import { ChangeDetectionStrategy, Component, computed, input, output } from '@angular/core';
import { MatIcon } from '@angular/material/icon';

import type { EffortVerdict } from '@shared/contracts/reading';
import { metricOf } from '../live-result';
import type { ReadEffort } from '../read-draft';
import { VERDICT_LABELS, type Verdict } from '../read-labels';

/** One numeric column of the metrics table. */
interface MetricColumn {
  /** Name in the engine's `EffortMetrics`. */
  readonly metric: string;
  readonly label: string;
  /** Spelled out for screen readers and the tooltip of the abbreviation. */
  readonly title: string;
  readonly unit: string;
  readonly digits: number;
  /** Multiplier from the engine's unit to the shown one (L to mL). */
  readonly scale?: number;
}

const METRIC_COLUMNS: readonly MetricColumn[] = [
  { metric: 'fev1L', label: 'FEV1', title: 'Forced expiratory volume in 1 second', unit: 'L', digits: 2 },
  { metric: 'fvcL', label: 'FVC', title: 'Forced vital capacity', unit: 'L', digits: 2 },
  { metric: 'fev6L', label: 'FEV6', title: 'Forced expiratory volume in 6 seconds', unit: 'L', digits: 2 },
  { metric: 'pefLPerS', label: 'PEF', title: 'Peak expiratory flow', unit: 'L/s', digits: 2 },
  { metric: 'fef2575LPerS', label: 'FEF25-75', title: 'Mean forced expiratory flow between 25 % and 75 % of FVC', unit: 'L/s', digits: 2 },
  { metric: 'fetS', label: 'FET', title: 'Forced expiratory time', unit: 's', digits: 1 },
  { metric: 'bevL', label: 'BEV', title: 'Back-extrapolated volume', unit: 'mL', digits: 0, scale: 1000 },
  { metric: 'timeZeroS', label: 'Time zero', title: 'Time zero on the recording', unit: 's', digits: 2 },
  { metric: 'hesitationTimeS', label: 'Hesitation', title: 'Time from full inspiration to time zero', unit: 's', digits: 2 },
  { metric: 'timeToPefS', label: 'To PEF', title: 'Time from time zero to peak flow', unit: 's', digits: 2 },
];

/**
 * Every effort's values as the engine measured them, with the reader's verdicts beside them.
 * Choosing an effort (its button, or a click on the row) selects it for the verdict panel.
 */
@Component({
  selector: 'app-effort-metrics-table',
  imports: [MatIcon],
  templateUrl: './effort-metrics-table.html',
  styleUrl: './effort-metrics-table.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class EffortMetricsTable {
  readonly efforts = input.required<readonly ReadEffort[]>();
  readonly verdicts = input.required<readonly EffortVerdict[]>();
  readonly selectedIndex = input<number | null>(null);
  readonly effortSelected = output<number>();

  protected readonly columns = METRIC_COLUMNS;
  protected readonly verdictLabels = VERDICT_LABELS;

  protected readonly rows = computed(() =>
    this.efforts().map((effort) => {
      const verdict = this.verdicts().find((candidate) => candidate.effortIndex === effort.index);
      return {
        effort,
        values: METRIC_COLUMNS.map((column) => metricText(effort, column)),
        plateauMl: plateauText(effort),
        fev1: verdict ? verdictCell(verdict.fev1Verdict, effort.suggestedFev1Verdict) : null,
        fvc: verdict ? verdictCell(verdict.fvcVerdict, effort.suggestedFvcVerdict) : null,
      };
    }),
  );

  /** A click anywhere on the row chooses it; the button in the first cell serves the keyboard. */
  protected selectFromRow(index: number, event: Event): void {
    if ((event.target as HTMLElement | null)?.closest('button')) return;
    this.effortSelected.emit(index);
  }
}

function metricText(effort: ReadEffort, column: MetricColumn): string {
  const value = metricOf(effort, column.metric);
  return value === null ? 'none' : (value * (column.scale ?? 1)).toFixed(column.digits);
}

/** Volume change over the last second of expiration (the plateau criterion), in mL. */
function plateauText(effort: ReadEffort): string {
  const endOfTest = effort.metrics['endOfTest'];
  const change = endOfTest && typeof endOfTest === 'object' ? (endOfTest as Record<string, unknown>)['lastSecondVolumeChangeL'] : undefined;
  return typeof change === 'number' ? (change * 1000).toFixed(0) : 'none';
}

function verdictCell(verdict: Verdict, suggested: Verdict) {
  return { verdict, overridden: verdict !== suggested, suggestedLabel: VERDICT_LABELS[suggested].label };
}
