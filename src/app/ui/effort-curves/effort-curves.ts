import {
  ChangeDetectionStrategy,
  Component,
  booleanAttribute,
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
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import type { Config, Layout, PlotlyHTMLElement } from 'plotly.js-dist-min';

import type { SessionCurves } from '@shared/contracts/sessions';
import { flowVolumeFigure, volumeTimeFigure, type CurveFigure, type VolumeTimeMarks } from './effort-curve-figures';
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
 * Readers also get time zero, the 1-s mark and the last-second plateau window. Plotly's own zoom
 * works on both charts; "Reset zoom" (or {@link resetZoom}) shows the whole curves again.
 * Presentational: it draws what it is given and reports clicks.
 */
@Component({
  selector: 'app-effort-curves',
  imports: [MatButton, MatIcon],
  templateUrl: './effort-curves.html',
  styleUrl: './effort-curves.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class EffortCurves {
  readonly curves = input.required<SessionCurves>();
  /** Index of the effort drawn on top; null draws all alike. */
  readonly highlightedIndex = input<number | null>(null);
  /** Whether to mark time zero and 1 s on the volume-time chart. */
  readonly timeMarks = input(false, { transform: booleanAttribute });
  /** FET (s) of the highlighted effort, to shade its last second; null shades nothing. */
  readonly highlightedFetS = input<number | null>(null);
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
    const marks = this.timeMarks() ? ' Time zero and 1 s are marked.' : '';
    const window = highlighted && this.highlightedFetS() !== null ? ' The last second before its FET is shaded.' : '';
    return (highlighted ? `${count}; ${highlighted.label} is highlighted.` : `${count}.`) + marks + window;
  });

  /** Effort index of each trace, per chart element, as last drawn. */
  private readonly effortOfTrace = new Map<HTMLElement, readonly number[]>();
  private readonly listening = new WeakSet<HTMLElement>();
  private plotly: PlotlyApi | null = null;
  private drawCount = 0;
  private destroyed = false;

  constructor() {
    afterRenderEffect(() => {
      void this.draw(this.curves(), this.highlightedIndex(), { timeMarks: this.timeMarks(), fetS: this.highlightedFetS() });
    });
    inject(DestroyRef).onDestroy(() => {
      this.destroyed = true;
      for (const element of this.effortOfTrace.keys()) this.plotly?.purge(element);
    });
  }

  /** Shows the whole curves again on both charts, after plotly zooming. */
  resetZoom(): void {
    const plotly = this.plotly;
    if (!plotly) return;
    // Plotly takes dotted attribute paths here, which its Layout type does not list.
    const autorange = { 'xaxis.autorange': true, 'yaxis.autorange': true } as Partial<Layout>;
    for (const element of this.effortOfTrace.keys()) void plotly.relayout(element, autorange);
  }

  private async draw(curves: SessionCurves, highlighted: number | null, marks: VolumeTimeMarks): Promise<void> {
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
      this.drawFigure(plotly, this.volumeTimePlot().nativeElement, volumeTimeFigure(curves, highlighted, marks)),
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
