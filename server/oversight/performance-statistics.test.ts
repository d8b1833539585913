import { describe, expect, it } from '@jest/globals';
import { daysBetween, hoursBetween, median, nearestRankPercentile, percent } from './performance-statistics.js';

describe('median', () => {
  it.each([
    [[], null],
    [[7], 7],
    [[3, 1, 2], 2],
    [[4, 1, 3, 2], 2.5],
    [[10, 30, 50], 30],
  ])('of %p is %p', (values, expected) => {
    expect(median(values)).toBe(expected);
  });
});

describe('nearest-rank percentile (Hyndman & Fan 1996, definition 1)', () => {
  // The first four rows: the worked example of the nearest-rank method in Wikipedia's
  // "Percentile" article (15, 20, 35, 40, 50 give p30 = 20, p40 = 20, p50 = 35, p100 = 50).
  // The others: hand counts of rank ceil(p/100 * n).
  it.each([
    [[15, 20, 35, 40, 50], 30, 20],
    [[15, 20, 35, 40, 50], 40, 20],
    [[15, 20, 35, 40, 50], 50, 35],
    [[15, 20, 35, 40, 50], 100, 50],
    [[50, 10, 30], 90, 50],
    [[1, 2, 3, 4, 5, 6, 7, 8, 9, 10], 90, 9],
    [[1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11], 90, 10],
    [[], 90, null],
  ])('of %p at p%p is %p', (values, p, expected) => {
    expect(nearestRankPercentile(values, p)).toBe(expected);
  });

  it.each([0, -5, 101, Number.NaN])('refuses p = %p', (p) => {
    expect(() => nearestRankPercentile([1], p)).toThrow(RangeError);
  });
});

describe('percent and elapsed time', () => {
  it.each([
    [1, 4, 25],
    [0, 3, 0],
    [2, 0, null],
  ])('%p of %p is %p %', (part, whole, expected) => {
    expect(percent(part, whole)).toBe(expected);
  });

  it('counts hours and days between ISO instants across offsets', () => {
    expect(hoursBetween('2026-11-01T08:00:00Z', '2026-11-02T09:30:00+01:00')).toBe(24.5);
    expect(daysBetween('2026-11-01T00:00:00.000Z', '2026-11-04T12:00:00.000Z')).toBe(3.5);
  });
});
