import { describe, expect, it } from '@jest/globals';

import type { SessionCurves } from '@shared/contracts/sessions';
import { flowVolumeFigure, volumeTimeFigure } from './effort-curve-figures';

type Trace = { name?: string; line?: { width?: number; dash?: string; color?: string }; opacity?: number };

// Three fictional efforts with short made-up curves; only their order and styling are checked here.
const CURVES: SessionCurves = {
  efforts: [0, 1, 2].map((index) => ({
    index,
    label: `Effort ${index + 1}`,
    timeS: [0, 0.5, 1],
    volumeL: [0, 2.5, 3.1],
    flowLPerS: [0, 6, 1],
    backExtrapolation: { timeS: [-0.05, 0.05], volumeL: [0, 0.3] },
  })),
};

function traces(figure: { data: unknown[] }): Trace[] {
  return figure.data as Trace[];
}

describe('volumeTimeFigure', () => {
  it('draws the highlighted effort last, thick, with its back-extrapolation after it', () => {
    const figure = volumeTimeFigure(CURVES, 1);
    expect(traces(figure).map((trace) => trace.name)).toEqual([
      'Effort 1',
      'Effort 3',
      'Effort 2',
      'Back-extrapolation, Effort 2',
    ]);
    expect(figure.effortOfTrace).toEqual([0, 2, 1, 1]);
    const [first, third, highlighted, backExtrapolation] = traces(figure);
    expect(highlighted.line?.width).toBeGreaterThan(first.line?.width ?? 0);
    expect(highlighted.opacity).toBe(1);
    expect(first.opacity).toBeLessThan(1);
    expect(third.opacity).toBeLessThan(1);
    expect(backExtrapolation.line?.dash).toBe('dash');
  });

  it('keeps each effort its colour whichever is highlighted', () => {
    const colourOf = (highlighted: number) =>
      Object.fromEntries(traces(volumeTimeFigure(CURVES, highlighted)).map((trace) => [trace.name, trace.line?.color]));
    expect(colourOf(0)['Effort 3']).toBe(colourOf(2)['Effort 3']);
  });

  it('draws all efforts alike and no back-extrapolation when none is highlighted', () => {
    const figure = volumeTimeFigure(CURVES, null);
    expect(traces(figure)).toHaveLength(3);
    expect(new Set(traces(figure).map((trace) => trace.opacity))).toEqual(new Set([1]));
  });
});

describe('volumeTimeFigure marks', () => {
  type ShapeSeen = { name?: string; type?: string; x0?: number; x1?: number; yref?: string };
  const shapesOf = (figure: { layout: { shapes?: unknown[] } }) => (figure.layout.shapes ?? []) as ShapeSeen[];

  it('draws no mark unless asked, so the site desk charts stay as they were', () => {
    expect(shapesOf(volumeTimeFigure(CURVES, 1))).toEqual([]);
  });

  it('marks time zero at 0 s and the 1-s mark at 1 s, across the whole plot height', () => {
    const shapes = shapesOf(volumeTimeFigure(CURVES, 1, { timeMarks: true, fetS: null }));
    expect(shapes.map(({ name, type, x0, x1, yref }) => ({ name, type, x0, x1, yref }))).toEqual([
      { name: 'time-zero', type: 'line', x0: 0, x1: 0, yref: 'paper' },
      { name: 'one-second', type: 'line', x0: 1, x1: 1, yref: 'paper' },
    ]);
  });

  // ATS/ERS 2019 (Graham et al. 2019): the plateau is judged on the volume change in the last 1 s of expiration.
  it.each([
    { fetS: 7.25, window: [6.25, 7.25] },
    { fetS: 0.6, window: [0, 0.6] },
  ])('shades the last second before FET $fetS s of the highlighted effort', ({ fetS, window }) => {
    const plateau = shapesOf(volumeTimeFigure(CURVES, 2, { timeMarks: false, fetS })).find((shape) => shape.name === 'plateau-window');
    expect([plateau?.x0, plateau?.x1]).toEqual(window);
  });

  it('shades no plateau window when no effort is highlighted', () => {
    expect(shapesOf(volumeTimeFigure(CURVES, null, { timeMarks: false, fetS: 7 }))).toEqual([]);
  });
});

describe('flowVolumeFigure', () => {
  it('plots flow against volume at 2 L/s to 1 L (ATS/ERS display ratio)', () => {
    const figure = flowVolumeFigure(CURVES, 2);
    expect(figure.effortOfTrace).toEqual([0, 1, 2]);
    expect(figure.layout.yaxis).toMatchObject({ scaleanchor: 'x', scaleratio: 0.5 });
    expect((figure.data[2] as { x: number[] }).x).toEqual(CURVES.efforts[2].volumeL);
  });
});
