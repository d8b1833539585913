import { readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from '@jest/globals';
import { resolveProtocol } from './protocol.js';
import { summarizeRead } from './read-summary.js';
import { analyzeSession } from './session-analysis.js';
import { generateSession } from './synthetic/curve-generator.js';

const protocol = resolveProtocol(JSON.parse(readFileSync(path.resolve('protocols/ats-ers-2019.v1.json'), 'utf8')));

// Three clean efforts with small spread (seeded generator: demo data), then the engine's first pass.
const recordings = generateSession({ efforts: 3, base: { fvcL: 4.2, pefLPerS: 8 }, fvcSdL: 0.05 }, 17).map((effort) => effort.recording);
const analysis = analyzeSession(recordings, protocol, { demographics: { ageYears: 50 } });
const asSuggested = analysis.efforts.map((effort) => ({
  index: effort.index,
  metrics: effort.metrics,
  fev1Verdict: effort.verdicts.fev1.verdict,
  fvcVerdict: effort.verdicts.fvc.verdict,
}));

describe('summarizeRead', () => {
  it("gives the engine's own grades and reported values when the reader keeps every suggestion", () => {
    const summary = summarizeRead(asSuggested, protocol, 50);
    expect(summary.fev1.grade).toBe(analysis.fev1.grade);
    expect(summary.fvc.grade).toBe(analysis.fvc.grade);
    expect(summary.reported).toEqual(analysis.reported);
    expect(summary.endpoint).toEqual(analysis.endpoint);
  });

  it('ATS/ERS 2019 Table 10 (Graham et al. 2019): one acceptable FEV1 left grades E, none acceptable but usable grades U', () => {
    expect(asSuggested.every((effort) => effort.fev1Verdict === 'acceptable')).toBe(true);
    const oneLeft = asSuggested.map((effort, i) => (i === 0 ? effort : { ...effort, fev1Verdict: 'not_acceptable' as const }));
    expect(summarizeRead(oneLeft, protocol, 50).fev1.grade).toBe('E');
    const usableOnly = asSuggested.map((effort) => ({ ...effort, fev1Verdict: 'usable' as const }));
    const summary = summarizeRead(usableOnly, protocol, 50);
    expect(summary.fev1.grade).toBe('U');
    expect(summary.reported.fev1?.fromUsable).toBe(true);
  });

  it('reports the largest acceptable FEV1 by effort index, not by position, when efforts are given out of order', () => {
    const reversed = [...asSuggested].reverse();
    const summary = summarizeRead(reversed, protocol, 50);
    const largest = asSuggested.reduce((best, effort) => ((effort.metrics.fev1L ?? 0) > (best.metrics.fev1L ?? 0) ? effort : best));
    expect(summary.reported.fev1?.effortIndex).toBe(largest.index);
    expect(summary.reported.fev1?.valueL).toBe(largest.metrics.fev1L);
  });
});
