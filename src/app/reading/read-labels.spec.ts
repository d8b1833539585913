import { describe, expect, it } from '@jest/globals';

import { blindContextText, findingValueText, utcSecondsText } from './read-labels';

describe('blindContextText', () => {
  it.each([
    { item: { visitCode: 'V2', timepointCode: 'T30', bronchodilator: 'post' as const }, text: 'Visit V2 · timepoint T30 · after bronchodilator' },
    { item: { visitCode: null, timepointCode: null, bronchodilator: 'pre' as const }, text: 'Before bronchodilator' },
    { item: { visitCode: null, timepointCode: null, bronchodilator: null }, text: 'Not shown (blinded by the study)' },
  ])('shows only what the blinding lets through: $text', ({ item, text }) => {
    expect(blindContextText(item)).toBe(text);
  });
});

// Units follow the engine's naming of its values (volumeL, timeS, flowLPerS).
describe('findingValueText', () => {
  it.each([
    { name: 'bevL', value: 0.16, text: 'bev 0.160 L' },
    { name: 'limitS', value: 2, text: 'limit 2.00 s' },
    { name: 'peakLPerS', value: 6.254, text: 'peak 6.254 L/s' },
    { name: 'fractionOfBest', value: 0.8512, text: 'fraction of best 0.85' },
    { name: 'atS', value: 0.4, text: 'at 0.40 s' },
  ])('$name = $value reads "$text"', ({ name, value, text }) => {
    expect(findingValueText(name, value)).toBe(text);
  });
});

describe('utcSecondsText', () => {
  it('shows a signature time in UTC whatever the offset it was written with', () => {
    expect(utcSecondsText('2025-02-03T10:12:30+01:00')).toBe('2025-02-03 09:12:30 UTC');
  });
});
