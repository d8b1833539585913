import { DecimalPipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatTableModule } from '@angular/material/table';

import { PERFORMANCE_CAUTION, type GradeCounts } from '@shared/contracts/oversight';
import { ApiError } from '../../core/http/api-error';
import { OversightApi } from '../oversight-api';
import { OversightTabs } from '../oversight-tabs/oversight-tabs';
import { PerformanceChart } from '../performance-chart/performance-chart';
import { acceptabilityFigure, gradeFigure, turnaroundFigure } from '../performance-chart/performance-figures';

/**
 * Site performance for the monitor: sessions and files, effort acceptability (engine and final
 * reads), grades, turnaround from upload to feedback, open queries and calibration compliance,
 * as a table and three charts, with an xlsx export of both dashboards.
 */
@Component({
  selector: 'app-site-performance-dashboard',
  imports: [DecimalPipe, MatButton, MatIcon, MatProgressBar, MatTableModule, OversightTabs, PerformanceChart],
  templateUrl: './site-performance-dashboard.html',
  styleUrl: './site-performance-dashboard.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SitePerformanceDashboard {
  private readonly api = inject(OversightApi);

  /** From the route. */
  readonly studyId = input.required<string>();

  protected readonly caution = PERFORMANCE_CAUTION;
  protected readonly columns = ['site', 'sessions', 'engine', 'readers', 'grades', 'turnaround', 'queries', 'calibration'] as const;
  protected readonly performance = this.api.sitePerformance(() => this.studyId());
  protected readonly report = computed(() => (this.performance.hasValue() ? this.performance.value() : undefined));
  protected readonly figures = computed(() => {
    const report = this.report();
    return report && { acceptability: acceptabilityFigure(report), grades: gradeFigure(report), turnaround: turnaroundFigure(report) };
  });
  protected readonly exportUrl = computed(() => this.api.performanceExportUrl(this.studyId()));
  protected readonly loadError = computed(() => {
    const error = this.performance.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'Site performance could not be read. Reload the page to try again.';
  });

  /** "A 3 · C 1": the grades that occur, best first. */
  protected gradeText(grades: GradeCounts): string {
    const present = Object.entries(grades).filter(([, count]) => count > 0);
    return present.length ? present.map(([grade, count]) => `${grade} ${count}`).join(' · ') : '—';
  }
}
