/**
 * The CDISC SDTM RE domain (Respiratory System Findings, SDTMIG v3.3 onwards) from locked
 * sessions and their final over-reads. Pure mapping; the writers turn the records into CSV and
 * SAS transport files.
 *
 * Choices, and why:
 * - One record per test per effort (FEV1, FVC, FEV1/FVC, PEF, FEF25-75, FET, BEV), grouped by
 *   REGRPID (one group per effort, unique within the subject) and numbered by REREPNUM (the
 *   effort's order within the session: --REPNUM is the Findings qualifier for a test repeated
 *   within one time point).
 * - The reader's acceptability verdicts per effort (ATS/ERS 2019: acceptable, usable, not
 *   acceptable, judged separately for FEV1 and FVC) are records of their own with sponsor-defined
 *   tests FEV1ACPT and FVCACPT. SDTMIG has no variable for it: --EXCLFL/--REASEX would lose the
 *   usable/acceptable difference, and --ACPTFL flags which evaluator's record is accepted, not
 *   the quality of a manoeuvre.
 * - Per session, derived records (REDRVFL = Y) for the reported FEV1, FVC and FEV1/FVC of the
 *   final read, and the session quality grades (sponsor-defined FEV1GRD, FVCGRD, ATS/ERS 2019).
 * - Pre/post bronchodilator goes into RETPT beside the study's time point, ordered by RETPTNUM.
 * - REEVAL = INDEPENDENT ASSESSOR for the blinded central over-reader (EVAL codelist, recalled
 *   from memory; the codelist is extensible should the sponsor prefer another term).
 * - REDTC is the local date-time of the test at the site, ISO 8601 with the UTC offset in force.
 * - A value that cannot be given (an effort with no FEV1, a session with no acceptable effort)
 *   is a record with RESTAT = NOT DONE and REREASND saying why.
 * - FEV1/FVC is a ratio (a decimal fraction, as ATS/ERS 2019 reports it, from memory) without unit.
 * - Texts are ASCII as the transport file holds them (accents dropped), in re.csv too, so that
 *   both files hold the same values.
 * - Precision (common practice): volumes to 1 mL (3 decimals, L), flows to 0.01 L/s, times to
 *   0.01 s, the ratio to 3 decimals. REORRES holds the fixed-decimal text; RESTRESN the same number.
 *
 * Test codes follow CDISC Controlled Terminology, codelists RETESTCD/RETEST (Respiratory Test
 * Code/Name). Marked below: codes recalled from memory (to be checked against the CT package the
 * sponsor pins) and sponsor-defined codes (extensible codelist).
 */
import type { Verdict } from '../../shared/spirometry/model.js';
import { localIsoWithOffset, type CellValue, type ReleaseColumn, type ReleaseSession } from './release-model.js';
import { toTransportText } from './xpt-writer.js';

/** One test of the RE domain as Tidemark writes it. */
export interface ReTest {
  readonly code: string;
  readonly name: string;
  readonly unit: string | null;
  /** Decimals of the result. */
  readonly digits: number;
  /** Where the code comes from. */
  readonly source: 'CDISC CT (recalled from memory)' | 'sponsor-defined';
}

/** The tests, in the order records are written. */
export const RE_TESTS = {
  FEV1: { code: 'FEV1', name: 'Forced Expiratory Volume in 1 Second', unit: 'L', digits: 3, source: 'CDISC CT (recalled from memory)' },
  FVC: { code: 'FVC', name: 'Forced Vital Capacity', unit: 'L', digits: 3, source: 'CDISC CT (recalled from memory)' },
  FEV1FVC: { code: 'FEV1FVC', name: 'FEV1/FVC', unit: null, digits: 3, source: 'CDISC CT (recalled from memory)' },
  PEF: { code: 'PEF', name: 'Peak Expiratory Flow', unit: 'L/s', digits: 2, source: 'CDISC CT (recalled from memory)' },
  FEF2575: { code: 'FEF2575', name: 'Forced Expiratory Flow 25-75% FVC', unit: 'L/s', digits: 2, source: 'CDISC CT (recalled from memory)' },
  FET: { code: 'FET', name: 'Forced Expiratory Time', unit: 's', digits: 2, source: 'sponsor-defined' },
  BEV: { code: 'BEV', name: 'Back Extrapolated Volume', unit: 'L', digits: 3, source: 'sponsor-defined' },
  FEV1ACPT: { code: 'FEV1ACPT', name: 'FEV1 Acceptability', unit: null, digits: 0, source: 'sponsor-defined' },
  FVCACPT: { code: 'FVCACPT', name: 'FVC Acceptability', unit: null, digits: 0, source: 'sponsor-defined' },
  FEV1GRD: { code: 'FEV1GRD', name: 'FEV1 Quality Grade', unit: null, digits: 0, source: 'sponsor-defined' },
  FVCGRD: { code: 'FVCGRD', name: 'FVC Quality Grade', unit: null, digits: 0, source: 'sponsor-defined' },
} as const satisfies Record<string, ReTest>;

/** Results of the acceptability tests (ATS/ERS 2019 categories). */
export const ACCEPTABILITY_RESULTS: Record<Verdict, string> = {
  acceptable: 'ACCEPTABLE',
  usable: 'USABLE',
  not_acceptable: 'NOT ACCEPTABLE',
};

export const RE_METHOD = 'SPIROMETRY';
export const RE_EVALUATOR = 'INDEPENDENT ASSESSOR';
export const RE_NOT_DONE = 'NOT DONE';
export const REASON_NOT_COMPUTABLE = 'NOT COMPUTABLE FROM THE RECORDED CURVE';
export const REASON_NOT_REPORTABLE = 'NO ACCEPTABLE OR USABLE EFFORT';

/** The RE variables in SDTMIG order (SDTMIG v3.3 labels, recalled from memory). */
export const RE_VARIABLES = [
  'STUDYID',
  'DOMAIN',
  'USUBJID',
  'RESEQ',
  'REGRPID',
  'RETESTCD',
  'RETEST',
  'REORRES',
  'REORRESU',
  'RESTRESC',
  'RESTRESN',
  'RESTRESU',
  'RESTAT',
  'REREASND',
  'REMETHOD',
  'REDRVFL',
  'REEVAL',
  'REREPNUM',
  'VISITNUM',
  'VISIT',
  'REDTC',
  'RETPT',
  'RETPTNUM',
] as const;
export type ReVariable = (typeof RE_VARIABLES)[number];

/**
 * One RE record as the values of {@link RE_VARIABLES} in order. Records are arrays, not objects:
 * a release writes about ten per effort, a million for a large study, and each passes through
 * the CSV and transport writers once.
 */
export type ReRow = CellValue[];

/** Position of each variable in a {@link ReRow}. */
export const RE: Readonly<Record<ReVariable, number>> = Object.fromEntries(RE_VARIABLES.map((name, index) => [name, index])) as Record<
  ReVariable,
  number
>;

/** A record as an object keyed by variable name (for tests and checks). */
export function reRowAsObject(row: readonly CellValue[]): Record<ReVariable, CellValue> {
  return Object.fromEntries(RE_VARIABLES.map((name, index) => [name, row[index]])) as Record<ReVariable, CellValue>;
}

const LABELS: Record<ReVariable, string> = {
  STUDYID: 'Study Identifier',
  DOMAIN: 'Domain Abbreviation',
  USUBJID: 'Unique Subject Identifier',
  RESEQ: 'Sequence Number',
  REGRPID: 'Group ID',
  RETESTCD: 'Short Name of Respiratory Test',
  RETEST: 'Name of Respiratory Test',
  REORRES: 'Result or Finding in Original Units',
  REORRESU: 'Original Units',
  RESTRESC: 'Character Result/Finding in Std Format',
  RESTRESN: 'Numeric Result/Finding in Standard Units',
  RESTRESU: 'Standard Units',
  RESTAT: 'Completion Status',
  REREASND: 'Reason Not Done',
  REMETHOD: 'Method of Test or Examination',
  REDRVFL: 'Derived Flag',
  REEVAL: 'Evaluator',
  REREPNUM: 'Repetition Number',
  VISITNUM: 'Visit Number',
  VISIT: 'Visit Name',
  REDTC: 'Date/Time of Collection',
  RETPT: 'Planned Time Point Name',
  RETPTNUM: 'Planned Time Point Number',
};

const DESCRIPTIONS: Record<ReVariable, string> = {
  STUDYID: 'The study code.',
  DOMAIN: 'RE.',
  USUBJID: 'Study code and subject code joined by a hyphen.',
  RESEQ: 'Order of the record within the subject in this dataset.',
  REGRPID: 'Visit, time point, PRE/POST and E<effort number> for the records of one effort; RPT for the derived records of the session.',
  RETESTCD: 'Test code.',
  RETEST: 'Test name.',
  REORRES: 'Result as text, fixed decimals per test.',
  REORRESU: 'Unit of REORRES.',
  RESTRESC: 'Same as REORRES (results are in standard units).',
  RESTRESN: 'Numeric result, rounded as REORRES.',
  RESTRESU: 'Unit of RESTRESC and RESTRESN.',
  RESTAT: 'NOT DONE when the value cannot be given.',
  REREASND: 'Why the value cannot be given.',
  REMETHOD: 'SPIROMETRY.',
  REDRVFL: 'Y for the reported values and grades derived from the final read.',
  REEVAL: 'The blinded central over-reader.',
  REREPNUM: 'Effort number within the session (1 = first effort of the file).',
  VISITNUM: 'Order of the visit in the study schedule.',
  VISIT: 'Visit name of the study schedule.',
  REDTC: 'Local date-time of the test at the site, ISO 8601 with UTC offset.',
  RETPT: 'Study time point, then PRE-BRONCHODILATOR or POST-BRONCHODILATOR.',
  RETPTNUM: 'Time point order x 10, plus 1 before and 2 after the bronchodilator.',
};

const NUMERIC: Partial<Record<ReVariable, 'integer' | 'decimal'>> = {
  RESEQ: 'integer',
  RESTRESN: 'decimal',
  REREPNUM: 'integer',
  VISITNUM: 'integer',
  RETPTNUM: 'integer',
};

const CODELISTS: Partial<Record<ReVariable, string>> = {
  RETESTCD: 'RETESTCD',
  RETEST: 'RETEST',
  REORRESU: 'UNIT',
  RESTRESU: 'UNIT',
  RESTAT: 'ND',
  REMETHOD: 'METHOD',
  REDRVFL: 'NY',
  REEVAL: 'EVAL',
};

/** The RE variables as release columns, for the CSV, workbook, transport and define writers. */
export const RE_COLUMNS: readonly ReleaseColumn<ReRow>[] = RE_VARIABLES.map((name, index) => ({
  name,
  label: LABELS[name],
  type: NUMERIC[name] ?? 'text',
  description: DESCRIPTIONS[name],
  codelist: CODELISTS[name],
  value: (row: ReRow) => row[index],
}));

/** USUBJID: study code and subject code (subject codes are unique within a study). */
export function uniqueSubjectId(studyCode: string, subjectCode: string): string {
  return `${studyCode}-${subjectCode}`;
}

/**
 * Calls `emit` with each RE record of one session: effort by effort (in effort order, tests in
 * {@link RE_TESTS} order), then the session's derived records. RESEQ continues `sequence`, the
 * number of records already written for the subject; returns the new count. The same array is
 * passed each time, refilled: write it out before `emit` returns.
 */
export function emitReRows(session: ReleaseSession, sequence: number, emit: (row: ReRow) => void): number {
  const phase = session.bronchodilator === 'pre' ? 'PRE' : 'POST';
  const group = toTransportText(`${session.visitCode}-${session.timepointCode}-${phase}`);
  const row: ReRow = new Array(RE_VARIABLES.length).fill(null);
  row[RE.STUDYID] = toTransportText(session.studyCode);
  row[RE.DOMAIN] = 'RE';
  row[RE.USUBJID] = toTransportText(uniqueSubjectId(session.studyCode, session.subjectCode));
  row[RE.REMETHOD] = RE_METHOD;
  row[RE.REEVAL] = RE_EVALUATOR;
  row[RE.VISITNUM] = session.visitNumber;
  row[RE.VISIT] = toTransportText(session.visitName);
  row[RE.REDTC] = localIsoWithOffset(session.testedAt, session.timeZone);
  row[RE.RETPT] = toTransportText(`${session.timepointName} ${phase}-BRONCHODILATOR`);
  row[RE.RETPTNUM] = session.timepointNumber * 10 + (session.bronchodilator === 'pre' ? 1 : 2);
  const put = () => {
    row[RE.RESEQ] = ++sequence;
    emit(row);
  };
  row[RE.REDRVFL] = null;
  for (const effort of session.efforts) {
    row[RE.REGRPID] = `${group}-E${effort.effortIndex + 1}`;
    row[RE.REREPNUM] = effort.effortIndex + 1;
    const ratio = effort.fev1L !== null && effort.fvcL !== null && effort.fvcL > 0 ? effort.fev1L / effort.fvcL : null;
    setNumeric(row, RE_TESTS.FEV1, effort.fev1L, REASON_NOT_COMPUTABLE);
    put();
    setNumeric(row, RE_TESTS.FVC, effort.fvcL, REASON_NOT_COMPUTABLE);
    put();
    setNumeric(row, RE_TESTS.FEV1FVC, ratio, REASON_NOT_COMPUTABLE);
    put();
    setNumeric(row, RE_TESTS.PEF, effort.pefLPerS, REASON_NOT_COMPUTABLE);
    put();
    setNumeric(row, RE_TESTS.FEF2575, effort.fef2575LPerS, REASON_NOT_COMPUTABLE);
    put();
    setNumeric(row, RE_TESTS.FET, effort.fetS, REASON_NOT_COMPUTABLE);
    put();
    setNumeric(row, RE_TESTS.BEV, effort.bevL, REASON_NOT_COMPUTABLE);
    put();
    setCategory(row, RE_TESTS.FEV1ACPT, ACCEPTABILITY_RESULTS[effort.fev1Verdict]);
    put();
    setCategory(row, RE_TESTS.FVCACPT, ACCEPTABILITY_RESULTS[effort.fvcVerdict]);
    put();
  }
  const result = session.read.result;
  row[RE.REGRPID] = `${group}-RPT`;
  row[RE.REREPNUM] = null;
  row[RE.REDRVFL] = 'Y';
  setNumeric(row, RE_TESTS.FEV1, result.reportedFev1L, REASON_NOT_REPORTABLE);
  put();
  setNumeric(row, RE_TESTS.FVC, result.reportedFvcL, REASON_NOT_REPORTABLE);
  put();
  setNumeric(row, RE_TESTS.FEV1FVC, result.fev1FvcRatio, REASON_NOT_REPORTABLE);
  put();
  setCategory(row, RE_TESTS.FEV1GRD, result.fev1Grade);
  put();
  setCategory(row, RE_TESTS.FVCGRD, result.fvcGrade);
  put();
  return sequence;
}

/** Derived records of each session (REDRVFL = Y): reported FEV1, FVC and FEV1/FVC, and the two grades. */
export const RE_DERIVED_RECORDS_PER_SESSION = 5;

/** Every RE record of one session as separate arrays, RESEQ from 1 (for tests and small data). */
export function reRowsOfSession(session: ReleaseSession, sequence = 0): ReRow[] {
  const rows: ReRow[] = [];
  emitReRows(session, sequence, (row) => rows.push([...row]));
  return rows;
}

function setNumeric(row: ReRow, test: ReTest, value: number | null, reasonIfMissing: string): void {
  row[RE.RETESTCD] = test.code;
  row[RE.RETEST] = test.name;
  if (value === null || !Number.isFinite(value)) {
    row[RE.REORRES] = null;
    row[RE.REORRESU] = null;
    row[RE.RESTRESC] = null;
    row[RE.RESTRESN] = null;
    row[RE.RESTRESU] = null;
    row[RE.RESTAT] = RE_NOT_DONE;
    row[RE.REREASND] = reasonIfMissing;
    return;
  }
  let text = value.toFixed(test.digits);
  const rounded = Number(text);
  // A value that rounds to zero from below is written without a minus sign.
  if (rounded === 0 && text.charCodeAt(0) === 45) text = text.slice(1);
  row[RE.REORRES] = text;
  row[RE.REORRESU] = test.unit;
  row[RE.RESTRESC] = text;
  row[RE.RESTRESN] = rounded === 0 ? 0 : rounded;
  row[RE.RESTRESU] = test.unit;
  row[RE.RESTAT] = null;
  row[RE.REREASND] = null;
}

function setCategory(row: ReRow, test: ReTest, value: string): void {
  row[RE.RETESTCD] = test.code;
  row[RE.RETEST] = test.name;
  row[RE.REORRES] = value;
  row[RE.REORRESU] = null;
  row[RE.RESTRESC] = value;
  row[RE.RESTRESN] = null;
  row[RE.RESTRESU] = null;
  row[RE.RESTAT] = null;
  row[RE.REREASND] = null;
}

/** Counts RE records per USUBJID, so that RESEQ runs 1, 2, 3 … per subject across sessions. */
export class ReSequencer {
  private readonly written = new Map<string, number>();

  /** Emits the session's records with RESEQ continuing the subject's count. */
  emit(session: ReleaseSession, emit: (row: ReRow) => void): void {
    const usubjid = uniqueSubjectId(session.studyCode, session.subjectCode);
    this.written.set(usubjid, emitReRows(session, this.written.get(usubjid) ?? 0, emit));
  }
}
