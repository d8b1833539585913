import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  ElementRef,
  afterRenderEffect,
  computed,
  inject,
  input,
  output,
  signal,
  viewChild,
} from '@angular/core';
import type { Config, PlotlyHTMLElement } from 'plotly.js-dist-min';

import type { SessionCurves } from '@shared/contracts/sessions';
import { flowVolumeFigure, volumeTimeFigure, type CurveFigure } from './effort-curve-figures';
import { loadPlotly, type PlotlyApi } from './plotly-loader';

const PLOT_CONFIG: Partial<Config> = {
  displaylogo: false,
  responsive: true,
  modeBarButtonsToRemove: ['select2d', 'lasso2d', 'autoScale2d'],
};

let nextId = 0;

/**
 * Volume-time and flow-volume charts of a session's efforts, all overlaid. The highlighted effort
 * is drawn thick and on top (with its back-extrapolation); clicking a curve selects its effort.
 * Presentational: it draws what it is given and reports clicks.
 */
@Component({
  selector: 'app-effort-curves',
  templateUrl: './effort-curves.html',
  styleUrl: './effort-curves.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class EffortCurves {
  readonly curves = input.required<SessionCurves>();
  /** Index of the effort drawn on top; null draws all alike. */
  readonly highlightedIndex = input<number | null>(null);
  /** The index of an effort whose curve was clicked. */
  readonly effortSelected = output<number>();

  private readonly volumeTimePlot = viewChild.required<ElementRef<HTMLDivElement>>('volumeTime');
  private readonly flowVolumePlot = viewChild.required<ElementRef<HTMLDivElement>>('flowVolume');

  protected readonly captionId = `effort-curves-${nextId++}`;
  protected readonly drawState = signal<'loading' | 'drawn' | 'failed'>('loading');
  protected readonly description = computed(() => {
    const efforts = this.curves().efforts;
    const highlighted = efforts.find((effort) => effort.index === this.highlightedIndex());
    const count = `${efforts.length} ${efforts.length === 1 ? 'effort' : 'efforts'} overlaid`;
    return highlighted ? `${count}; ${highlighted.label} is highlighted.` : `${count}.`;
  });

  /** Effort index of each trace, per chart element, as last drawn. */
  private readonly effortOfTrace = new Map<HTMLElement, readonly number[]>();
  private readonly listening = new WeakSet<HTMLElement>();
  private plotly: PlotlyApi | null = null;
  private drawCount = 0;
  private destroyed = false;

  constructor() {
    afterRenderEffect(() => {
      void this.draw(this.curves(), this.highlightedIndex());
    });
    inject(DestroyRef).onDestroy(() => {
      this.destroyed = true;
      for (const element of this.effortOfTrace.keys()) this.plotly?.purge(element);
    });
  }

  private async draw(curves: SessionCurves, highlighted: number | null): Promise<void> {
    const drawing = ++this.drawCount;
    const plotly = await loadPlotly().catch(() => null);
    // A newer draw started while plotly loaded, or the page went away: leave it to that one.
    if (drawing !== this.drawCount || this.destroyed) return;
    if (!plotly) {
      this.drawState.set('failed');
      return;
    }
    this.plotly = plotly;
    await Promise.all([
      this.drawFigure(plotly, this.volumeTimePlot().nativeElement, volumeTimeFigure(curves, highlighted)),
      this.drawFigure(plotly, this.flowVolumePlot().nativeElement, flowVolumeFigure(curves, highlighted)),
    ]);
    this.drawState.set('drawn');
  }

  private async drawFigure(plotly: PlotlyApi, element: HTMLDivElement, figure: CurveFigure): Promise<void> {
    this.effortOfTrace.set(element, figure.effortOfTrace);
    const plot: PlotlyHTMLElement = await plotly.react(element, figure.data, figure.layout, PLOT_CONFIG);
    if (this.listening.has(element)) return;
    this.listening.add(element);
    plot.on('plotly_click', (event) => {
      const traceNumber = event.points[0]?.curveNumber;
      const effortIndex = traceNumber === undefined ? undefined : this.effortOfTrace.get(element)?.[traceNumber];
      if (effortIndex !== undefined) this.effortSelected.emit(effortIndex);
    });
  }
}
