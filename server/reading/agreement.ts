/**
 * Agreement between two raters on nominal categories: percent agreement and Cohen's kappa
 * (Cohen 1960, "A coefficient of agreement for nominal scales", Educ Psychol Meas 20:37-46).
 * Pure: no I/O, no clock.
 */

/** The two ratings one item received, one from each rater. */
export interface RatingPair<C extends string> {
  readonly a: C;
  readonly b: C;
}

/** Agreement over a set of rating pairs. */
export interface AgreementStatistics {
  /** How many pairs were compared. */
  readonly count: number;
  /** Percent (0-100) of pairs on which both raters chose the same category; null without pairs. */
  readonly percentAgreement: number | null;
  /**
   * Cohen's kappa, (po - pe) / (1 - pe). Null without pairs, and null when chance agreement pe is 1
   * (both raters used one and the same category for every item): kappa is then 0/0, undefined.
   */
  readonly kappa: number | null;
}

/** Observed and chance agreement behind a kappa, as proportions. */
export interface KappaParts {
  readonly observed: number;
  readonly expected: number;
  readonly kappa: number | null;
}

/**
 * The contingency table of two raters: rows are rater A's category, columns rater B's,
 * in the order of `categories`. A rating outside `categories` is a programming error.
 */
export function contingencyTable<C extends string>(pairs: readonly RatingPair<C>[], categories: readonly C[]): number[][] {
  const position = new Map(categories.map((category, index) => [category, index]));
  const table = categories.map(() => categories.map(() => 0));
  for (const pair of pairs) {
    const row = position.get(pair.a);
    const column = position.get(pair.b);
    if (row === undefined || column === undefined) {
      throw new Error(`Rating "${row === undefined ? pair.a : pair.b}" is not one of the categories ${categories.join(', ')}`);
    }
    table[row][column] += 1;
  }
  return table;
}

/** Observed agreement, chance agreement from the margins, and kappa of a square contingency table. */
export function kappaFromTable(table: readonly (readonly number[])[]): KappaParts | null {
  const total = table.reduce((sum, row) => sum + row.reduce((rowSum, cell) => rowSum + cell, 0), 0);
  if (total === 0) return null;
  const size = table.length;
  let diagonal = 0;
  let chance = 0;
  for (let k = 0; k < size; k++) {
    diagonal += table[k][k];
    const rowTotal = table[k].reduce((sum, cell) => sum + cell, 0);
    const columnTotal = table.reduce((sum, row) => sum + row[k], 0);
    chance += rowTotal * columnTotal;
  }
  const observed = diagonal / total;
  const expected = chance / (total * total);
  return { observed, expected, kappa: expected === 1 ? null : (observed - expected) / (1 - expected) };
}

/** Percent agreement and Cohen's kappa of paired ratings. */
export function agreementOf<C extends string>(pairs: readonly RatingPair<C>[], categories: readonly C[]): AgreementStatistics {
  const parts = kappaFromTable(contingencyTable(pairs, categories));
  if (!parts) return { count: 0, percentAgreement: null, kappa: null };
  return { count: pairs.length, percentAgreement: parts.observed * 100, kappa: parts.kappa };
}

/** The three effort verdicts, the categories of the reading room's kappa. */
export const VERDICT_CATEGORIES = ['acceptable', 'usable', 'not_acceptable'] as const;
type VerdictCategory = (typeof VERDICT_CATEGORIES)[number];

/** One read of a compared pair: who read, the effort verdicts and the grades. */
export interface ReadForAgreement {
  readonly readerId: string;
  readonly readerName: string;
  readonly verdicts: readonly { readonly effortIndex: number; readonly fev1Verdict: VerdictCategory; readonly fvcVerdict: VerdictCategory }[];
  readonly fev1Grade: string;
  readonly fvcGrade: string;
}

/** The two signed reads (first and second) of one session. */
export interface ReadPairForAgreement {
  readonly first: ReadForAgreement;
  readonly second: ReadForAgreement;
}

/** Reader agreement of one study, in the shape of the Agreement contract. */
export interface StudyAgreement {
  readonly comparedSessions: number;
  readonly comparedEfforts: number;
  readonly percentAgreement: number | null;
  readonly kappa: number | null;
  readonly gradeAgreementPercent: number | null;
  readonly pairs: {
    readonly readerA: string;
    readonly readerB: string;
    readonly comparedEfforts: number;
    readonly percentAgreement: number | null;
    readonly kappa: number | null;
  }[];
}

/**
 * Agreement of a study's dual reads. Each effort judged in both reads contributes two verdict
 * pairs, FEV1 and FVC, to the percent agreement and to Cohen's kappa over the three verdicts;
 * each session contributes two grade pairs (FEV1 grade, FVC grade) to the grade agreement. Reader
 * pairs are unordered (who read first does not matter) and listed by name.
 */
export function studyAgreement(sessions: readonly ReadPairForAgreement[]): StudyAgreement {
  const allPairs: RatingPair<VerdictCategory>[] = [];
  let comparedEfforts = 0;
  let gradePairs = 0;
  let gradeMatches = 0;
  const byReaders = new Map<string, { readerA: string; readerB: string; efforts: number; pairs: RatingPair<VerdictCategory>[] }>();
  for (const { first, second } of sessions) {
    const [one, other] = first.readerName.localeCompare(second.readerName) <= 0 ? [first, second] : [second, first];
    const key = `${one.readerId}\n${other.readerId}`;
    const group = byReaders.get(key) ?? { readerA: one.readerName, readerB: other.readerName, efforts: 0, pairs: [] };
    byReaders.set(key, group);
    const secondByEffort = new Map(second.verdicts.map((verdict) => [verdict.effortIndex, verdict]));
    for (const verdict of first.verdicts) {
      const counterpart = secondByEffort.get(verdict.effortIndex);
      if (!counterpart) continue;
      const effortPairs = [
        { a: verdict.fev1Verdict, b: counterpart.fev1Verdict },
        { a: verdict.fvcVerdict, b: counterpart.fvcVerdict },
      ];
      allPairs.push(...effortPairs);
      group.pairs.push(...effortPairs);
      group.efforts += 1;
      comparedEfforts += 1;
    }
    gradePairs += 2;
    gradeMatches += (first.fev1Grade === second.fev1Grade ? 1 : 0) + (first.fvcGrade === second.fvcGrade ? 1 : 0);
  }
  const overall = agreementOf(allPairs, VERDICT_CATEGORIES);
  return {
    comparedSessions: sessions.length,
    comparedEfforts,
    percentAgreement: overall.percentAgreement,
    kappa: overall.kappa,
    gradeAgreementPercent: gradePairs === 0 ? null : (gradeMatches / gradePairs) * 100,
    pairs: [...byReaders.values()]
      .map((group) => {
        const statistics = agreementOf(group.pairs, VERDICT_CATEGORIES);
        return {
          readerA: group.readerA,
          readerB: group.readerB,
          comparedEfforts: group.efforts,
          percentAgreement: statistics.percentAgreement,
          kappa: statistics.kappa,
        };
      })
      .sort((x, y) => x.readerA.localeCompare(y.readerA) || x.readerB.localeCompare(y.readerB)),
  };
}
