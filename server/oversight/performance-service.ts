import type {
  Acceptability,
  GradeCounts,
  ReaderPerformance,
  ReaderPerformanceReport,
  SitePerformance,
  SitePerformanceReport,
  VerdictAgreement,
} from '../../shared/contracts/oversight.js';
import { gradeSchema, verdictSchema } from '../../shared/contracts/sessions.js';
import { AppError } from '../http/app-error.js';
import { agreementOf, type RatingPair } from '../reading/agreement.js';
import type { StudyRepository } from '../studies/study-repository.js';
import { performanceWorkbook } from './oversight-xlsx.js';
import type { PerformanceReadRow, PerformanceRepository, PerformanceVerdictRow } from './performance-repository.js';
import { daysBetween, hoursBetween, median, nearestRankPercentile, percent } from './performance-statistics.js';

type Verdict = (typeof verdictSchema.options)[number];
type Grade = (typeof gradeSchema.options)[number];

const VERDICTS = verdictSchema.options;
const GRADES = gradeSchema.options;
const MS_PER_DAY = 86_400_000;

/** How reader agreement is computed; shown with the figures and in the export. */
export const AGREEMENT_METHOD =
  'Agreement compares the FEV1 and FVC verdicts (acceptable, usable, not acceptable) that the two independent readers of a ' +
  'dual-read session gave to the same efforts, for sessions with both reads signed on the same file. Percent agreement is ' +
  "the share of identical verdicts; kappa is Cohen's kappa over the three categories (Cohen 1960). A reader's figures are " +
  'against the other reader of the same sessions.';

/**
 * Site and reader performance for the monitor's dashboards and their xlsx export. Counts come
 * straight from the stored sessions, files, efforts, reads, queries and calibration checks.
 */
export class PerformanceService {
  constructor(
    private readonly repository: PerformanceRepository,
    private readonly studies: StudyRepository,
    private readonly clock: () => Date,
  ) {}

  sites(studyId: string): SitePerformanceReport {
    const study = this.requireStudy(studyId);
    const now = this.clock().toISOString();
    const sessions = this.repository.sessionsOf(studyId);
    const signed = this.repository.signedReads(studyId);
    const verdictsByRead = groupBy(this.repository.signedVerdicts(studyId), (row) => row.readId);
    const finalReads = finalReadsOf(
      sessions.filter((session) => session.status === 'final').map((session) => session.id),
      signed,
    );

    const bySite = new Map<string, SiteTally>(this.repository.sitesOf(studyId).map((site) => [site.id, newTally(site)]));
    const tallyOf = (siteId: string) => bySite.get(siteId);

    for (const session of sessions) {
      const tally = tallyOf(session.siteId);
      if (!tally) continue;
      tally.sessions.total++;
      if (session.status === 'awaiting-file') tally.sessions.awaitingFile++;
      else if (session.status === 'rejected') tally.sessions.rejected++;
      else tally.sessions.checked++;

      const finalRead = finalReads.get(session.id);
      const finalGrades = finalRead ? gradesOf(finalRead.resultJson) : null;
      if (finalGrades) {
        tally.grades.fromFinalReads++;
        tally.grades.fev1[finalGrades.fev1]++;
        tally.grades.fvc[finalGrades.fvc]++;
      } else if (isGrade(session.fev1Grade) || isGrade(session.fvcGrade)) {
        tally.grades.fromEngine++;
        if (isGrade(session.fev1Grade)) tally.grades.fev1[session.fev1Grade]++;
        if (isGrade(session.fvcGrade)) tally.grades.fvc[session.fvcGrade]++;
      }
      if (finalRead) {
        for (const verdict of verdictsByRead.get(finalRead.id) ?? []) countEffort(tally.readerAcceptability, verdict.fev1Verdict, verdict.fvcVerdict);
      }
      if (session.feedbackReleasedAt && session.currentFileReceivedAt) {
        tally.turnaroundHours.push(hoursBetween(session.currentFileReceivedAt, session.feedbackReleasedAt));
      }
    }
    for (const row of this.repository.uploadOutcomes(studyId)) {
      const tally = tallyOf(row.siteId);
      if (!tally) continue;
      tally.sessions.filesReceived += row.files;
      if (row.outcome === 'rejected') tally.sessions.filesRejected += row.files;
    }
    for (const row of this.repository.engineVerdicts(studyId)) {
      const tally = tallyOf(row.siteId);
      if (tally) countEffort(tally.engineAcceptability, row.fev1Verdict, row.fvcVerdict, row.efforts);
    }
    for (const query of this.repository.unclosedQueries(studyId)) tallyOf(query.siteId)?.openQueryAgesDays.push(daysBetween(query.openedAt, now));

    const calibration = new Map(this.repository.calibrationBySite(studyId).map((row) => [row.siteId, row]));
    return {
      generatedAt: now,
      turnaroundTargetHours: study.turnaroundHours,
      sites: [...bySite.values()].map((tally): SitePerformance => {
        const checks = calibration.get(tally.site.id);
        const within = tally.turnaroundHours.filter((hours) => hours <= study.turnaroundHours).length;
        return {
          siteId: tally.site.id,
          siteNumber: tally.site.number,
          siteName: tally.site.name,
          sessions: tally.sessions,
          engineAcceptability: withPercentages(tally.engineAcceptability),
          readerAcceptability: withPercentages(tally.readerAcceptability),
          grades: tally.grades,
          turnaround: {
            sessions: tally.turnaroundHours.length,
            medianHours: median(tally.turnaroundHours),
            p90Hours: nearestRankPercentile(tally.turnaroundHours, 90),
            withinTargetPercent: percent(within, tally.turnaroundHours.length),
          },
          openQueries: {
            count: tally.openQueryAgesDays.length,
            oldestAgeDays: tally.openQueryAgesDays.length ? Math.max(...tally.openQueryAgesDays) : null,
            medianAgeDays: median(tally.openQueryAgesDays),
          },
          calibration: {
            checks: checks?.checks ?? 0,
            withinTolerance: checks?.withinTolerance ?? 0,
            compliancePercent: percent(checks?.withinTolerance ?? 0, checks?.checks ?? 0),
            lastCheckedAt: checks?.lastCheckedAt ?? null,
            daysSinceLastCheck: checks?.lastCheckedAt ? daysBetween(checks.lastCheckedAt, now) : null,
          },
        };
      }),
    };
  }

  readers(studyId: string): ReaderPerformanceReport {
    this.requireStudy(studyId);
    const now = this.clock().toISOString();
    const monthAgo = new Date(Date.parse(now) - 30 * MS_PER_DAY).toISOString();
    const signed = this.repository.signedReads(studyId);
    const verdictsByRead = groupBy(this.repository.signedVerdicts(studyId), (row) => row.readId);
    const inProgress = new Map(this.repository.readsInProgress(studyId).map((row) => [row.readerId, row.reads]));
    const readsByReader = groupBy(signed, (read) => read.readerId);
    const readerIds = [...new Set([...readsByReader.keys(), ...inProgress.keys()])];
    const names = this.repository.userNames(readerIds);

    const dualPairs = dualReadPairs(signed, verdictsByRead);
    const readers = readerIds.map((readerId): ReaderPerformance => {
      const mine = readsByReader.get(readerId) ?? [];
      const readMinutes = mine.filter((read) => read.signedAt).map((read) => hoursBetween(read.claimedAt, read.signedAt!) * 60);
      let verdicts = 0;
      let overrides = 0;
      for (const read of mine) {
        for (const row of verdictsByRead.get(read.id) ?? []) {
          verdicts += 2;
          if (row.fev1Verdict !== row.suggestedFev1Verdict) overrides++;
          if (row.fvcVerdict !== row.suggestedFvcVerdict) overrides++;
        }
      }
      const agreementPairs = dualPairs.flatMap((pair) =>
        pair.readerA === readerId ? pair.ratings : pair.readerB === readerId ? pair.ratings.map(({ a, b }) => ({ a: b, b: a })) : [],
      );
      return {
        readerId,
        name: names.get(readerId) ?? readerId,
        signedReads: mine.length,
        signedByKind: {
          first: mine.filter((read) => read.kind === 'first').length,
          second: mine.filter((read) => read.kind === 'second').length,
          adjudication: mine.filter((read) => read.kind === 'adjudication').length,
        },
        inProgress: inProgress.get(readerId) ?? 0,
        signedLast30Days: mine.filter((read) => read.signedAt && read.signedAt >= monthAgo && read.signedAt <= now).length,
        medianReadMinutes: median(readMinutes),
        verdicts,
        overrides,
        overridePercent: percent(overrides, verdicts),
        agreement: verdictAgreement(agreementPairs),
      };
    });
    readers.sort((a, b) => a.name.localeCompare(b.name));
    return {
      generatedAt: now,
      readers,
      overall: { ...verdictAgreement(dualPairs.flatMap((pair) => pair.ratings)), comparedSessions: dualPairs.length },
      method: AGREEMENT_METHOD,
    };
  }

  /** What the two dashboards show, as an xlsx workbook with a readme sheet. */
  async exportXlsx(studyId: string): Promise<{ fileName: string; bytes: Buffer }> {
    const study = this.requireStudy(studyId);
    const sites = this.sites(studyId);
    const readers = this.readers(studyId);
    const bytes = await performanceWorkbook({ studyCode: study.code, studyTitle: study.title, sites, readers });
    const day = sites.generatedAt.slice(0, 10);
    return { fileName: `performance-${study.code}-${day}.xlsx`.replace(/[^\w.-]+/g, '_'), bytes };
  }

  private requireStudy(studyId: string) {
    const study = this.studies.findStudy(studyId);
    if (!study) throw AppError.notFound('There is no such study.');
    return study;
  }
}

interface SiteTally {
  readonly site: { id: string; number: string; name: string };
  readonly sessions: SitePerformance['sessions'];
  readonly engineAcceptability: Acceptability;
  readonly readerAcceptability: Acceptability;
  readonly grades: SitePerformance['grades'];
  readonly turnaroundHours: number[];
  readonly openQueryAgesDays: number[];
}

function newTally(site: { id: string; number: string; name: string }): SiteTally {
  return {
    site,
    sessions: { total: 0, awaitingFile: 0, checked: 0, rejected: 0, filesReceived: 0, filesRejected: 0 },
    engineAcceptability: emptyAcceptability(),
    readerAcceptability: emptyAcceptability(),
    grades: { fev1: emptyGrades(), fvc: emptyGrades(), fromFinalReads: 0, fromEngine: 0 },
    turnaroundHours: [],
    openQueryAgesDays: [],
  };
}

function emptyAcceptability(): Acceptability {
  const counts = () => ({ acceptable: 0, usable: 0, notAcceptable: 0, acceptablePercent: null });
  return { efforts: 0, fev1: counts(), fvc: counts() };
}

function emptyGrades(): GradeCounts {
  return { A: 0, B: 0, C: 0, D: 0, E: 0, F: 0, U: 0 };
}

const VERDICT_KEY: Record<Verdict, 'acceptable' | 'usable' | 'notAcceptable'> = {
  acceptable: 'acceptable',
  usable: 'usable',
  not_acceptable: 'notAcceptable',
};

function countEffort(tally: Acceptability, fev1: string, fvc: string, efforts = 1): void {
  tally.efforts += efforts;
  if (isVerdict(fev1)) tally.fev1[VERDICT_KEY[fev1]] += efforts;
  if (isVerdict(fvc)) tally.fvc[VERDICT_KEY[fvc]] += efforts;
}

function withPercentages(tally: Acceptability): Acceptability {
  return {
    efforts: tally.efforts,
    fev1: { ...tally.fev1, acceptablePercent: percent(tally.fev1.acceptable, tally.efforts) },
    fvc: { ...tally.fvc, acceptablePercent: percent(tally.fvc.acceptable, tally.efforts) },
  };
}

function isVerdict(value: string): value is Verdict {
  return (VERDICTS as readonly string[]).includes(value);
}

function isGrade(value: string | null): value is Grade {
  return value !== null && (GRADES as readonly string[]).includes(value);
}

/** The grades a signed read's stored result gives; null when it has none readable. */
function gradesOf(resultJson: string | null): { fev1: Grade; fvc: Grade } | null {
  if (!resultJson) return null;
  try {
    const result = JSON.parse(resultJson) as { fev1Grade?: unknown; fvcGrade?: unknown };
    const { fev1Grade, fvcGrade } = result;
    return typeof fev1Grade === 'string' && typeof fvcGrade === 'string' && isGrade(fev1Grade) && isGrade(fvcGrade)
      ? { fev1: fev1Grade, fvc: fvcGrade }
      : null;
  } catch {
    // SyntaxError: an unreadable result falls back to the engine's grades.
    return null;
  }
}

/**
 * The final read of each final session, chosen as the site feedback chooses it: the signed
 * adjudication read if there is one, else the earliest signed read. `signed` is in signing order.
 */
function finalReadsOf(finalSessionIds: readonly string[], signed: readonly PerformanceReadRow[]): Map<string, PerformanceReadRow> {
  const wanted = new Set(finalSessionIds);
  const chosen = new Map<string, PerformanceReadRow>();
  for (const read of signed) {
    if (!wanted.has(read.sessionId)) continue;
    const current = chosen.get(read.sessionId);
    if (!current || (read.kind === 'adjudication' && current.kind !== 'adjudication')) chosen.set(read.sessionId, read);
  }
  return chosen;
}

/** The verdict pairs of one dual-read session: reader A gave the first read, reader B the second. */
interface DualPair {
  readonly readerA: string;
  readonly readerB: string;
  readonly ratings: RatingPair<Verdict>[];
}

/** Sessions with a signed first and a signed second read on the same file, their verdicts paired by effort. */
function dualReadPairs(signed: readonly PerformanceReadRow[], verdictsByRead: Map<string, PerformanceVerdictRow[]>): DualPair[] {
  const pairs: DualPair[] = [];
  for (const reads of groupBy(signed, (read) => read.sessionId).values()) {
    const first = reads.find((read) => read.kind === 'first');
    const second = reads.find((read) => read.kind === 'second');
    if (!first || !second || first.uploadId !== second.uploadId || first.readerId === second.readerId) continue;
    const secondVerdicts = new Map((verdictsByRead.get(second.id) ?? []).map((row) => [row.effortIndex, row]));
    const ratings: RatingPair<Verdict>[] = [];
    for (const a of verdictsByRead.get(first.id) ?? []) {
      const b = secondVerdicts.get(a.effortIndex);
      if (!b) continue;
      for (const [ratingA, ratingB] of [
        [a.fev1Verdict, b.fev1Verdict],
        [a.fvcVerdict, b.fvcVerdict],
      ]) {
        if (isVerdict(ratingA) && isVerdict(ratingB)) ratings.push({ a: ratingA, b: ratingB });
      }
    }
    pairs.push({ readerA: first.readerId, readerB: second.readerId, ratings });
  }
  return pairs;
}

function verdictAgreement(pairs: readonly RatingPair<Verdict>[]): VerdictAgreement {
  const statistics = agreementOf(pairs, VERDICTS);
  return { comparedVerdicts: statistics.count, percentAgreement: statistics.percentAgreement, kappa: statistics.kappa };
}

function groupBy<T>(items: readonly T[], keyOf: (item: T) => string): Map<string, T[]> {
  const groups = new Map<string, T[]>();
  for (const item of items) {
    const key = keyOf(item);
    const group = groups.get(key);
    if (group) group.push(item);
    else groups.set(key, [item]);
  }
  return groups;
}
