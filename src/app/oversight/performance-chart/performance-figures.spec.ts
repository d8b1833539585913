import type { ReaderPerformanceReport, SitePerformance, SitePerformanceReport } from '@shared/contracts/oversight';
import { acceptabilityFigure, gradeFigure, readerFigure, turnaroundFigure } from './performance-figures';

function site(number: string, overrides: Partial<SitePerformance> = {}): SitePerformance {
  const verdicts = (acceptablePercent: number | null) => ({ acceptable: 0, usable: 0, notAcceptable: 0, acceptablePercent });
  const grades = { A: 0, B: 0, C: 0, D: 0, E: 0, F: 0, U: 0 };
  return {
    siteId: `site-${number}`,
    siteNumber: number,
    siteName: `Site ${number}`,
    sessions: { total: 0, awaitingFile: 0, checked: 0, rejected: 0, filesReceived: 0, filesRejected: 0 },
    engineAcceptability: { efforts: 0, fev1: verdicts(90), fvc: verdicts(80) },
    readerAcceptability: { efforts: 0, fev1: verdicts(null), fvc: verdicts(null) },
    grades: { fev1: { ...grades, A: 3, C: 1 }, fvc: grades, fromFinalReads: 0, fromEngine: 4 },
    turnaround: { sessions: 3, medianHours: 30, p90Hours: 50, withinTargetPercent: 66.7 },
    openQueries: { count: 0, oldestAgeDays: null, medianAgeDays: null },
    calibration: { checks: 0, withinTolerance: 0, compliancePercent: null, lastCheckedAt: null, daysSinceLastCheck: null },
    ...overrides,
  };
}

const report: SitePerformanceReport = {
  generatedAt: '2026-11-10T12:00:00.000Z',
  turnaroundTargetHours: 48,
  sites: [site('101'), site('102', { turnaround: { sessions: 0, medianHours: null, p90Hours: null, withinTargetPercent: null } })],
};

describe('performance figures', () => {
  it('draws acceptability per site, engine beside final reads, with no bar where nothing was read', () => {
    const figure = acceptabilityFigure(report);
    expect(figure.data.map((trace) => (trace as { name: string }).name)).toEqual(['FEV1, engine', 'FEV1, final reads', 'FVC, engine', 'FVC, final reads']);
    expect((figure.data[0] as { x: string[]; y: number[] }).x).toEqual(['101', '102']);
    expect((figure.data[0] as { y: number[] }).y).toEqual([90, 90]);
    expect((figure.data[1] as { y: (number | null)[] }).y).toEqual([null, null]);
  });

  it('stacks the FEV1 grades A to U per site', () => {
    const figure = gradeFigure(report);
    expect(figure.layout.barmode).toBe('stack');
    expect(figure.data).toHaveLength(7);
    expect((figure.data[0] as { y: number[] }).y).toEqual([3, 3]);
    expect((figure.data[2] as { name: string; y: number[] }).name).toBe('Grade C');
  });

  it('draws the turnaround target as a dashed line at the study target', () => {
    const figure = turnaroundFigure(report);
    expect(figure.layout.shapes?.[0]).toMatchObject({ y0: 48, y1: 48, line: { dash: 'dash' } });
    expect((figure.data[1] as { y: (number | null)[] }).y).toEqual([50, null]);
  });

  it('puts override and agreement percentages of readers on a second axis', () => {
    const readers: ReaderPerformanceReport = {
      generatedAt: report.generatedAt,
      readers: [
        {
          readerId: 'r1',
          name: 'Reader One',
          signedReads: 3,
          signedByKind: { first: 3, second: 0, adjudication: 0 },
          inProgress: 0,
          signedLast30Days: 3,
          medianReadMinutes: 40,
          verdicts: 18,
          overrides: 2,
          overridePercent: 11.1,
          agreement: { comparedVerdicts: 6, percentAgreement: 66.7, kappa: -0.09 },
        },
      ],
      overall: { comparedSessions: 1, comparedVerdicts: 6, percentAgreement: 66.7, kappa: -0.09 },
      method: 'Cohen',
    };
    const figure = readerFigure(readers);
    expect(figure.data.map((trace) => (trace as { yaxis?: string }).yaxis)).toEqual([undefined, 'y2', 'y2']);
    expect((figure.data[1] as { y: number[] }).y).toEqual([11.1]);
  });
});
