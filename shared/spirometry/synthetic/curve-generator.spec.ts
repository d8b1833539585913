import { describe, expect, it } from '@jest/globals';
import { effortToCsv, generateEffort, generateSession } from './curve-generator.js';
import { SeededRandom } from './seeded-random.js';

describe('synthetic curve generator', () => {
  it('is deterministic: the same seed gives the same recording, another seed another one', () => {
    const a = generateEffort({ sampleRateHz: 100, signal: 'flow' }, 5);
    const b = generateEffort({ sampleRateHz: 100, signal: 'flow' }, 5);
    const c = generateEffort({ sampleRateHz: 100, signal: 'flow' }, 6);
    expect(effortToCsv(a.recording)).toBe(effortToCsv(b.recording));
    expect(effortToCsv(a.recording)).not.toBe(effortToCsv(c.recording));
  });

  it('has the time zero and BEV of its sin^2 rise, derived from the ATS/ERS 2019 back-extrapolation definition (from memory)', () => {
    // Line through the peak (at tr) with slope PEF: t0 = tr - V(tr)/PEF = tr/2 since V(tr) = PEF tr/2;
    // BEV = integral of PEF sin^2(pi t/(2 tr)) from 0 to tr/2 = PEF tr (1/4 - 1/(2 pi)). Our derivation.
    const pef = 7;
    const tr = 0.12;
    const { truth } = generateEffort({ pefLPerS: pef, riseTimeS: tr, fvcL: 4.5 }, 1);
    expect(truth.timeZeroS - truth.blowStartS).toBeCloseTo(tr / 2, 4);
    expect(truth.bevL).toBeCloseTo(pef * tr * (0.25 - 1 / (2 * Math.PI)), 4);
    expect(truth.pefLPerS).toBeCloseTo(pef, 3);
    // The two-compartment emptying leaves under 2 mL after 12 s: FVC as specified.
    expect(truth.fvcL).toBeCloseTo(4.5, 2);
  });

  it('makes sessions whose FVC spread follows the requested standard deviation', () => {
    const tight = generateSession({ efforts: 8, base: { sampleRateHz: 100 }, fvcSdL: 0.02 }, 3).map((e) => e.truth.fvcL);
    const loose = generateSession({ efforts: 8, base: { sampleRateHz: 100 }, fvcSdL: 0.4 }, 3).map((e) => e.truth.fvcL);
    const range = (xs: number[]) => Math.max(...xs) - Math.min(...xs);
    expect(range(tight)).toBeLessThan(0.15);
    expect(range(loose)).toBeGreaterThan(0.25);
  });

  it('draws normal noise with the requested spread (seeded)', () => {
    const random = new SeededRandom(99);
    const xs = Array.from({ length: 20000 }, () => random.normal(1, 2));
    const mean = xs.reduce((s, x) => s + x, 0) / xs.length;
    const sd = Math.sqrt(xs.reduce((s, x) => s + (x - mean) ** 2, 0) / (xs.length - 1));
    // Standard error of the mean 2/sqrt(20000) = 0.014; of the SD about 0.01.
    expect(Math.abs(mean - 1)).toBeLessThan(0.06);
    expect(Math.abs(sd - 2)).toBeLessThan(0.05);
  });
});
