import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  ElementRef,
  afterRenderEffect,
  inject,
  input,
  signal,
  viewChild,
} from '@angular/core';
import type { Config } from 'plotly.js-dist-min';

import { loadPlotly, type PlotlyApi } from '../../ui/effort-curves/plotly-loader';
import type { PerformanceFigure } from './performance-figures';

const PLOT_CONFIG: Partial<Config> = {
  displaylogo: false,
  responsive: true,
  modeBarButtonsToRemove: ['select2d', 'lasso2d', 'autoScale2d'],
};

let nextId = 0;

/**
 * One dashboard chart, drawn by plotly once its lazy chunk has loaded. Presentational: it draws
 * the figure it is given; the table beside it holds every value, so a failed load loses nothing.
 */
@Component({
  selector: 'app-performance-chart',
  template: `
    <figure class="chart">
      <figcaption [id]="captionId">{{ caption() }}</figcaption>
      <div #plot class="plot" role="img" [attr.aria-labelledby]="captionId" [attr.aria-description]="description()"></div>
      @switch (drawState()) {
        @case ('loading') {
          <p class="state">Drawing the chart…</p>
        }
        @case ('failed') {
          <p class="state" role="alert">The chart could not be loaded. Reload the page to try again; the table holds every value.</p>
        }
      }
    </figure>
  `,
  styles: `
    :host {
      display: block;
    }
    .chart {
      margin: 0;
      padding: 0.75rem;
      border: 1px solid var(--mat-sys-outline-variant);
      border-radius: var(--mat-sys-corner-medium);
      background: var(--mat-sys-surface);
    }
    figcaption {
      font: var(--mat-sys-title-small);
      margin-bottom: 0.25rem;
    }
    .plot {
      height: 20rem;
    }
    .state {
      margin: 0.5rem 0 0;
      color: var(--mat-sys-on-surface-variant);
    }
  `,
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class PerformanceChart {
  readonly figure = input.required<PerformanceFigure>();
  readonly caption = input.required<string>();
  /** What the chart shows, in words, for screen readers. */
  readonly description = input('');

  private readonly plot = viewChild.required<ElementRef<HTMLDivElement>>('plot');
  protected readonly captionId = `performance-chart-${nextId++}`;
  protected readonly drawState = signal<'loading' | 'drawn' | 'failed'>('loading');

  private plotly: PlotlyApi | null = null;
  private drawCount = 0;
  private destroyed = false;

  constructor() {
    afterRenderEffect(() => {
      void this.draw(this.figure());
    });
    inject(DestroyRef).onDestroy(() => {
      this.destroyed = true;
      this.plotly?.purge(this.plot().nativeElement);
    });
  }

  private async draw(figure: PerformanceFigure): Promise<void> {
    const drawing = ++this.drawCount;
    const plotly = await loadPlotly().catch(() => null);
    // A newer figure arrived while plotly loaded, or the page went away: leave it to that one.
    if (drawing !== this.drawCount || this.destroyed) return;
    if (!plotly) {
      this.drawState.set('failed');
      return;
    }
    this.plotly = plotly;
    await plotly.react(this.plot().nativeElement, figure.data, figure.layout, PLOT_CONFIG);
    this.drawState.set('drawn');
  }
}
