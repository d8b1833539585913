import { describe, expect, it } from '@jest/globals';
import { effortToCsv, generateEffort } from './curve-generator.js';
import { OBSTRUCTIVE_RANGES, drawObstructiveShape, obstructiveEffortSpec, obstructiveShapeValues, obstructiveVolumeL } from './obstructive-effort.js';
import { SeededRandom } from './seeded-random.js';

describe('obstructive effort generator (our two-compartment model, synthetic/blow-shape.ts)', () => {
  it('is deterministic: the same seed gives the same spec and recording, another seed another one', () => {
    const a = generateEffort(obstructiveEffortSpec(7, { sampleRateHz: 100 }), 7);
    const b = generateEffort(obstructiveEffortSpec(7, { sampleRateHz: 100 }), 7);
    const c = generateEffort(obstructiveEffortSpec(8, { sampleRateHz: 100 }), 8);
    expect(effortToCsv(a.recording)).toBe(effortToCsv(b.recording));
    expect(effortToCsv(a.recording)).not.toBe(effortToCsv(c.recording));
  });

  it('draws moderate-COPD shapes: PEF 3-6 L/s, FVC 2-4 L, FEV1/FVC 0.45-0.65, plateaus from under 10 s to beyond 15 s', () => {
    const fetsS: number[] = [];
    for (let seed = 1; seed <= 200; seed++) {
      const shape = drawObstructiveShape(new SeededRandom(seed));
      const values = obstructiveShapeValues(shape);
      expect(shape.pefLPerS).toBeGreaterThanOrEqual(OBSTRUCTIVE_RANGES.pefLPerS[0]);
      expect(shape.pefLPerS).toBeLessThanOrEqual(OBSTRUCTIVE_RANGES.pefLPerS[1]);
      expect(shape.fvcL).toBeGreaterThanOrEqual(OBSTRUCTIVE_RANGES.fvcL[0]);
      expect(shape.fvcL).toBeLessThanOrEqual(OBSTRUCTIVE_RANGES.fvcL[1]);
      expect(values.fev1FvcRatio).toBeGreaterThanOrEqual(0.45);
      expect(values.fev1FvcRatio).toBeLessThanOrEqual(0.65);
      // A clean shape keeps BEV under 60 % of its limit (the greater of 5 % FVC and 0.100 L; ATS/ERS 2019, from memory).
      expect(values.bevL).toBeLessThanOrEqual(0.6 * Math.max(0.1, 0.05 * shape.fvcL) + 1e-12);
      // Time to PEF is tr/2 (line through the peak with slope PEF): under the 0.15 s of common practice.
      expect(values.timeZeroS).toBeLessThan(0.15);
      fetsS.push(values.plateauTimeS - values.timeZeroS);
    }
    // Long, slow emptying (common practice for moderate COPD): most plateaus after 8 s, some only after 15 s.
    expect(Math.min(...fetsS)).toBeGreaterThan(7);
    expect(fetsS.filter((fetS) => fetS > 10).length).toBeGreaterThan(100);
    expect(fetsS.some((fetS) => fetS > 15)).toBe(true);
  });

  it('the generated truth agrees with the closed form of the shape (sin^2 rise, two exponentials)', () => {
    // obstructive-effort.ts: t0 = tr/2, BEV = PEF tr (1/4 - 1/(2 pi)), FEV1 = V(t0 + 1), FVC = V(end of the blow).
    for (let seed = 1; seed <= 5; seed++) {
      const spec = obstructiveEffortSpec(seed, { sampleRateHz: 100 });
      const shape = { pefLPerS: spec.pefLPerS, fvcL: spec.fvcL, riseTimeS: spec.riseTimeS, slowFraction: spec.slowFraction, slowTauS: spec.slowTauS };
      const { truth } = generateEffort({ ...spec, cardiogenicLPerS: 0 }, seed);
      const values = obstructiveShapeValues(shape);
      expect(truth.timeZeroS - truth.blowStartS).toBeCloseTo(values.timeZeroS, 4);
      expect(truth.bevL).toBeCloseTo(values.bevL, 4);
      expect(truth.fev1L).toBeCloseTo(values.fev1L, 4);
      expect(truth.fvcL).toBeCloseTo(obstructiveVolumeL(shape, spec.blowDurationS), 4);
      expect(truth.pefLPerS).toBeCloseTo(shape.pefLPerS, 3);
    }
  });

  it('builds a slow start with about twice the BEV limit on every lung size', () => {
    for (let seed = 1; seed <= 20; seed++) {
      const { truth } = generateEffort(obstructiveEffortSpec(seed, { sampleRateHz: 100, faults: ['slow-start'] }), seed);
      // Limit: the greater of 5 % of FVC and 0.100 L (ATS/ERS 2019, from memory).
      const ratio = truth.bevL / Math.max(0.1, 0.05 * truth.fvcL);
      expect(ratio).toBeGreaterThan(1.5);
      expect(ratio).toBeLessThan(2.5);
      expect(truth.expectedFindings).toContain('bev-excessive');
    }
  });

  it('a cough (dip, then a burst) holds back no volume: FVC as without it', () => {
    for (const fault of ['cough-first-second', 'cough-late'] as const) {
      const spec = obstructiveEffortSpec(3, { sampleRateHz: 100 });
      const plain = generateEffort(spec, 3).truth;
      const coughed = generateEffort({ ...spec, faults: [fault] }, 3).truth;
      expect(Math.abs(coughed.fvcL - plain.fvcL)).toBeLessThan(0.005);
    }
  });
});
