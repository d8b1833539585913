import { DecimalPipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatTableModule } from '@angular/material/table';

import { PERFORMANCE_CAUTION } from '@shared/contracts/oversight';
import { ApiError } from '../../core/http/api-error';
import { OversightApi } from '../oversight-api';
import { OversightTabs } from '../oversight-tabs/oversight-tabs';
import { PerformanceChart } from '../performance-chart/performance-chart';
import { readerFigure } from '../performance-chart/performance-figures';

/**
 * Reader performance for the monitor: throughput and read time, overrides of the engine's
 * suggestions, and agreement with Cohen's kappa on dual-read sessions, as a table and a chart.
 */
@Component({
  selector: 'app-reader-performance-dashboard',
  imports: [DecimalPipe, MatButton, MatIcon, MatProgressBar, MatTableModule, OversightTabs, PerformanceChart],
  templateUrl: './reader-performance-dashboard.html',
  styleUrl: './reader-performance-dashboard.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReaderPerformanceDashboard {
  private readonly api = inject(OversightApi);

  /** From the route. */
  readonly studyId = input.required<string>();

  protected readonly caution = PERFORMANCE_CAUTION;
  protected readonly columns = ['reader', 'signed', 'inProgress', 'readTime', 'overrides', 'agreement', 'kappa'] as const;
  protected readonly performance = this.api.readerPerformance(() => this.studyId());
  protected readonly report = computed(() => (this.performance.hasValue() ? this.performance.value() : undefined));
  protected readonly figure = computed(() => {
    const report = this.report();
    return report && report.readers.length > 0 ? readerFigure(report) : undefined;
  });
  protected readonly overallSummary = computed(() => {
    const overall = this.report()?.overall;
    if (!overall) return '';
    if (overall.comparedSessions === 0) return 'No dual-read session has both reads signed yet, so there is no agreement to show.';
    const sessions = overall.comparedSessions === 1 ? '1 session' : `${overall.comparedSessions} sessions`;
    const agreement = overall.percentAgreement === null ? 'none' : `${overall.percentAgreement.toFixed(1)} %`;
    const kappa = overall.kappa === null ? 'undefined' : overall.kappa.toFixed(2);
    return `Overall agreement on dual reads (${sessions}): ${agreement}, kappa ${kappa}.`;
  });
  protected readonly exportUrl = computed(() => this.api.performanceExportUrl(this.studyId()));
  protected readonly loadError = computed(() => {
    const error = this.performance.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'Reader performance could not be read. Reload the page to try again.';
  });
}
