import type { Data, Layout, Shape } from 'plotly.js-dist-min';

import type { SessionCurves } from '@shared/contracts/sessions';

type EffortCurve = SessionCurves['efforts'][number];

/** What plotly draws for one chart, and which effort each trace belongs to (for clicks). */
export interface CurveFigure {
  readonly data: Data[];
  readonly layout: Partial<Layout>;
  /** Effort index of each trace, in trace order. */
  readonly effortOfTrace: readonly number[];
}

/** Tidemark's own series colours: sea, shore, kelp, heather, slate, rust, dusk. */
export const EFFORT_COLOURS = ['#006783', '#78592f', '#4f6b2d', '#8a3f5c', '#3d5a80', '#b0562b', '#5c4d9a'] as const;

const FONT = { family: "'Merriweather Sans', system-ui, sans-serif", size: 12, color: '#171c1e' };
const GRID_COLOUR = '#d4dbde';

/** The colour of an effort, stable whichever effort is highlighted. */
export function effortColour(position: number): string {
  return EFFORT_COLOURS[position % EFFORT_COLOURS.length];
}

/**
 * Efforts in drawing order with their colours: the highlighted one last, so it is drawn on top.
 */
function inDrawingOrder(curves: SessionCurves, highlighted: number | null) {
  const withColour = curves.efforts.map((effort, position) => ({ effort, colour: effortColour(position) }));
  return [
    ...withColour.filter(({ effort }) => effort.index !== highlighted),
    ...withColour.filter(({ effort }) => effort.index === highlighted),
  ];
}

function lineStyle(colour: string, isHighlighted: boolean, anyHighlighted: boolean) {
  return {
    line: { color: colour, width: isHighlighted ? 3.5 : 1.25 },
    opacity: isHighlighted || !anyHighlighted ? 1 : 0.4,
  };
}

function baseLayout(xTitle: string, yTitle: string): Partial<Layout> {
  return {
    font: FONT,
    margin: { l: 56, r: 16, t: 16, b: 48 },
    paper_bgcolor: 'rgba(0,0,0,0)',
    plot_bgcolor: 'rgba(0,0,0,0)',
    showlegend: true,
    legend: { orientation: 'h', y: -0.22 },
    hovermode: 'closest',
    // Keeps the reader's zoom when only the highlighted effort changes.
    uirevision: 'efforts',
    xaxis: { title: { text: xTitle }, gridcolor: GRID_COLOUR, zeroline: true, zerolinecolor: '#8b9294' },
    yaxis: { title: { text: yTitle }, gridcolor: GRID_COLOUR, zeroline: true, zerolinecolor: '#8b9294' },
  };
}

/** Reading marks on the volume-time chart; the curves' time axis starts at time zero. */
export interface VolumeTimeMarks {
  /** Whether to draw time zero and the 1-s mark (where FEV1 is read). */
  readonly timeMarks: boolean;
  /**
   * FET of the highlighted effort (s): the last second of forced expiration, where the plateau
   * criterion is judged (ATS/ERS 2019, Graham et al. 2019), is shaded. Null draws no window.
   */
  readonly fetS: number | null;
}

const NO_MARKS: VolumeTimeMarks = { timeMarks: false, fetS: null };
const MARK_COLOUR = '#41484b';

/** Volume against time for every effort, with the back-extrapolation of the highlighted one. */
export function volumeTimeFigure(curves: SessionCurves, highlighted: number | null, marks: VolumeTimeMarks = NO_MARKS): CurveFigure {
  const data: Data[] = [];
  const effortOfTrace: number[] = [];
  const drawingOrder = inDrawingOrder(curves, highlighted);
  for (const { effort, colour } of drawingOrder) {
    const isHighlighted = effort.index === highlighted;
    data.push({
      type: 'scatter',
      mode: 'lines',
      name: effort.label,
      x: effort.timeS,
      y: effort.volumeL,
      hovertemplate: `${effort.label}<br>%{x:.2f} s, %{y:.2f} L<extra></extra>`,
      ...lineStyle(colour, isHighlighted, highlighted !== null),
    });
    effortOfTrace.push(effort.index);
    if (isHighlighted && hasBackExtrapolation(effort)) {
      data.push({
        type: 'scatter',
        mode: 'lines',
        name: `Back-extrapolation, ${effort.label}`,
        x: effort.backExtrapolation.timeS,
        y: effort.backExtrapolation.volumeL,
        hovertemplate: `Back-extrapolation<br>%{x:.2f} s, %{y:.2f} L<extra></extra>`,
        line: { color: colour, width: 2, dash: 'dash' },
      });
      effortOfTrace.push(effort.index);
    }
  }
  const highlightedColour = drawingOrder.find(({ effort }) => effort.index === highlighted)?.colour ?? null;
  const shapes = volumeTimeShapes(marks, highlightedColour);
  const layout = baseLayout('Time (s)', 'Volume (L)');
  return {
    data,
    // Room above the plot for the marks' labels.
    layout: shapes.length ? { ...layout, shapes, margin: { ...layout.margin, t: 32 } } : layout,
    effortOfTrace,
  };
}

/** Vertical marks at time zero and 1 s, and the plateau window of the highlighted effort. */
function volumeTimeShapes(marks: VolumeTimeMarks, highlightedColour: string | null): Partial<Shape>[] {
  const shapes: Partial<Shape>[] = [];
  const label = (text: string) => ({ text, textposition: 'end' as const, yanchor: 'bottom' as const, font: { size: 11, color: MARK_COLOUR } });
  if (marks.fetS !== null && highlightedColour !== null && Number.isFinite(marks.fetS) && marks.fetS > 0) {
    shapes.push({
      type: 'rect',
      name: 'plateau-window',
      xref: 'x',
      yref: 'paper',
      x0: Math.max(0, marks.fetS - 1),
      x1: marks.fetS,
      y0: 0,
      y1: 1,
      layer: 'below',
      fillcolor: highlightedColour,
      opacity: 0.14,
      line: { width: 0 },
      label: { ...label('Last second'), textposition: 'top center' },
    });
  }
  if (marks.timeMarks) {
    const vertical = (name: string, x: number, text: string, dash: 'dot' | 'dashdot'): Partial<Shape> => ({
      type: 'line',
      name,
      xref: 'x',
      yref: 'paper',
      x0: x,
      x1: x,
      y0: 0,
      y1: 1,
      line: { color: MARK_COLOUR, width: 1.25, dash },
      label: label(text),
    });
    shapes.push(vertical('time-zero', 0, 'Time zero', 'dot'), vertical('one-second', 1, '1 s', 'dashdot'));
  }
  return shapes;
}

/**
 * Flow against volume for every effort. The flow axis runs at 2 L/s to the length of 1 L, the
 * display ratio of the ATS/ERS spirometry standards (Miller et al. 2005; Graham et al. 2019).
 */
export function flowVolumeFigure(curves: SessionCurves, highlighted: number | null): CurveFigure {
  const data: Data[] = [];
  const effortOfTrace: number[] = [];
  for (const { effort, colour } of inDrawingOrder(curves, highlighted)) {
    data.push({
      type: 'scatter',
      mode: 'lines',
      name: effort.label,
      x: effort.volumeL,
      y: effort.flowLPerS,
      hovertemplate: `${effort.label}<br>%{x:.2f} L, %{y:.2f} L/s<extra></extra>`,
      ...lineStyle(colour, effort.index === highlighted, highlighted !== null),
    });
    effortOfTrace.push(effort.index);
  }
  const layout = baseLayout('Volume (L)', 'Flow (L/s)');
  return {
    data,
    layout: { ...layout, yaxis: { ...layout.yaxis, scaleanchor: 'x', scaleratio: 0.5 } },
    effortOfTrace,
  };
}

function hasBackExtrapolation(effort: EffortCurve): boolean {
  return effort.backExtrapolation.timeS.length > 1 && effort.backExtrapolation.volumeL.length > 1;
}
