import type { Data, Layout } from 'plotly.js-dist-min';

import type { ReaderPerformanceReport, SitePerformanceReport } from '@shared/contracts/oversight';

/** What plotly draws for one chart. */
export interface PerformanceFigure {
  readonly data: Data[];
  readonly layout: Partial<Layout>;
}

/** Tidemark's series colours (as the effort curves use them): sea, shore, kelp, heather, slate, rust, dusk. */
const COLOURS = ['#006783', '#78592f', '#4f6b2d', '#8a3f5c', '#3d5a80', '#b0562b', '#5c4d9a'] as const;
/** Grades from best to worst, coloured from kelp green through shore and rust to heather; U in slate grey. */
const GRADE_COLOURS: Record<string, string> = {
  A: '#4f6b2d',
  B: '#7d9a52',
  C: '#c2a25d',
  D: '#b0562b',
  E: '#8a3f5c',
  F: '#5a2a3c',
  U: '#8b9499',
};
const GRADES = ['A', 'B', 'C', 'D', 'E', 'F', 'U'] as const;
const FONT = { family: "'Merriweather Sans', system-ui, sans-serif", size: 12, color: '#171c1e' };

function baseLayout(yTitle: string, extra: Partial<Layout> = {}, yAxis: Partial<Layout['yaxis']> = {}): Partial<Layout> {
  return {
    font: FONT,
    margin: { l: 56, r: 16, t: 40, b: 40 },
    paper_bgcolor: 'rgba(0,0,0,0)',
    plot_bgcolor: 'rgba(0,0,0,0)',
    legend: { orientation: 'h', x: 0, y: 1.02, yanchor: 'bottom' },
    xaxis: { title: { text: 'Site' }, type: 'category' },
    yaxis: { title: { text: yTitle }, gridcolor: '#d4dbde', rangemode: 'tozero', ...yAxis },
    ...extra,
  };
}

/** FEV1 and FVC acceptability per site: the engine's suggestions beside the final reads' verdicts. */
export function acceptabilityFigure(report: SitePerformanceReport): PerformanceFigure {
  const x = report.sites.map((site) => site.siteNumber);
  const series = [
    { name: 'FEV1, engine', values: report.sites.map((s) => s.engineAcceptability.fev1.acceptablePercent) },
    { name: 'FEV1, final reads', values: report.sites.map((s) => s.readerAcceptability.fev1.acceptablePercent) },
    { name: 'FVC, engine', values: report.sites.map((s) => s.engineAcceptability.fvc.acceptablePercent) },
    { name: 'FVC, final reads', values: report.sites.map((s) => s.readerAcceptability.fvc.acceptablePercent) },
  ];
  return {
    data: series.map((serie, index) => ({
      type: 'bar',
      name: serie.name,
      x,
      // A missing value (null) is drawn as no bar.
      y: serie.values,
      marker: { color: COLOURS[index] },
      hovertemplate: `${serie.name}: %{y:.1f} %<extra>Site %{x}</extra>`,
    })),
    layout: baseLayout('Acceptable efforts (%)', { barmode: 'group' }, { range: [0, 100] }),
  };
}

/** Sessions per FEV1 grade and site, stacked from A to U. */
export function gradeFigure(report: SitePerformanceReport): PerformanceFigure {
  const x = report.sites.map((site) => site.siteNumber);
  return {
    data: GRADES.map((grade) => ({
      type: 'bar',
      name: `Grade ${grade}`,
      x,
      y: report.sites.map((site) => site.grades.fev1[grade]),
      marker: { color: GRADE_COLOURS[grade] },
      hovertemplate: `FEV1 grade ${grade}: %{y} sessions<extra>Site %{x}</extra>`,
    })),
    // Plotly lists stacked traces top-down by default; A first reads better.
    layout: baseLayout('Sessions', { barmode: 'stack', legend: { orientation: 'h', x: 0, y: 1.02, yanchor: 'bottom', traceorder: 'normal' } }, { tickformat: 'd' }),
  };
}

/** Median and 90th-percentile turnaround per site, with the study's target as a dashed line. */
export function turnaroundFigure(report: SitePerformanceReport): PerformanceFigure {
  const x = report.sites.map((site) => site.siteNumber);
  return {
    data: [
      {
        type: 'bar',
        name: 'Median',
        x,
        y: report.sites.map((site) => site.turnaround.medianHours),
        marker: { color: COLOURS[0] },
        hovertemplate: 'Median: %{y:.1f} h<extra>Site %{x}</extra>',
      },
      {
        type: 'bar',
        name: '90th percentile',
        x,
        y: report.sites.map((site) => site.turnaround.p90Hours),
        marker: { color: COLOURS[1] },
        hovertemplate: '90th percentile: %{y:.1f} h<extra>Site %{x}</extra>',
      },
    ],
    layout: baseLayout('Hours from upload to feedback', {
      barmode: 'group',
      shapes: [
        {
          type: 'line',
          xref: 'paper',
          x0: 0,
          x1: 1,
          y0: report.turnaroundTargetHours,
          y1: report.turnaroundTargetHours,
          line: { color: COLOURS[5], dash: 'dash', width: 1.5 },
        },
      ],
      annotations: [
        {
          xref: 'paper',
          x: 1,
          xanchor: 'right',
          y: report.turnaroundTargetHours,
          yanchor: 'bottom',
          text: `Target ${report.turnaroundTargetHours} h`,
          showarrow: false,
          font: { ...FONT, color: COLOURS[5] },
        },
      ],
    }),
  };
}

/** Signed reads per reader (bars) with override and agreement percentages (markers, right axis). */
export function readerFigure(report: ReaderPerformanceReport): PerformanceFigure {
  const x = report.readers.map((reader) => reader.name);
  return {
    data: [
      {
        type: 'bar',
        name: 'Signed reads',
        x,
        y: report.readers.map((reader) => reader.signedReads),
        marker: { color: COLOURS[0] },
        hovertemplate: 'Signed reads: %{y}<extra>%{x}</extra>',
      },
      {
        type: 'scatter',
        mode: 'markers',
        name: 'Overrides of the engine (%)',
        x,
        y: report.readers.map((reader) => reader.overridePercent),
        yaxis: 'y2',
        marker: { color: COLOURS[5], size: 12, symbol: 'diamond' },
        hovertemplate: 'Overrides: %{y:.1f} %<extra>%{x}</extra>',
      },
      {
        type: 'scatter',
        mode: 'markers',
        name: 'Agreement on dual reads (%)',
        x,
        y: report.readers.map((reader) => reader.agreement.percentAgreement),
        yaxis: 'y2',
        marker: { color: COLOURS[2], size: 12, symbol: 'circle' },
        hovertemplate: 'Agreement: %{y:.1f} %<extra>%{x}</extra>',
      },
    ],
    layout: baseLayout(
      'Signed reads',
      {
        xaxis: { title: { text: 'Reader' }, type: 'category' },
        yaxis2: { title: { text: 'Percent' }, overlaying: 'y', side: 'right', range: [0, 100], tickmode: 'linear', tick0: 0, dtick: 20, showgrid: false },
        margin: { l: 56, r: 56, t: 40, b: 40 },
      },
      { tickformat: 'd' },
    ),
  };
}
