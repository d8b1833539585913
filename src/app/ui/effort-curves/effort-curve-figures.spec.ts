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

describe('flowVolumeFigure', () => {
  it('plots flow against volume at 2 L/s to 1 L (ATS/ERS display ratio)', () => {
    const figure = flowVolumeFigure(CURVES, 2);
    expect(figure.effortOfTrace).toEqual([0, 1, 2]);
    expect(figure.layout.yaxis).toMatchObject({ scaleanchor: 'x', scaleratio: 0.5 });
    expect((figure.data[2] as { x: number[] }).x).toEqual(CURVES.efforts[2].volumeL);
  });
});
