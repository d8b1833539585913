/**
 * The plain tables of a release, beside the SDTM RE domain: sessions, efforts (engine metrics,
 * engine suggestions and the final read's verdicts side by side) and final reads. Each is one CSV
 * file and one workbook sheet; the define document describes every column.
 */
import {
  localIsoWithOffset,
  type CellValue,
  type ReleaseColumn,
  type ReleaseEffort,
  type ReleaseSession,
  type ReleaseTable,
} from './release-model.js';

type Column<Row> = ReleaseColumn<Row>;

const textColumn = <Row>(name: string, description: string, value: (row: Row) => string | null, codelist?: string): Column<Row> => ({
  name,
  label: name,
  type: 'text',
  description,
  value,
  codelist,
});
const decimalColumn = <Row>(name: string, digits: number, description: string, value: (row: Row) => number | null): Column<Row> => ({
  name,
  label: name,
  type: 'decimal',
  digits,
  description,
  value,
});
const integerColumn = <Row>(name: string, description: string, value: (row: Row) => number | null): Column<Row> => ({
  name,
  label: name,
  type: 'integer',
  description,
  value,
});

/** Columns naming the session, first in every plain table so that rows can be joined. */
function sessionKeyColumns<Row>(session: (row: Row) => ReleaseSession): Column<Row>[] {
  return [
    textColumn('study_code', 'Study code.', (row) => session(row).studyCode),
    textColumn('site_number', 'Site number.', (row) => session(row).siteNumber),
    textColumn('subject_code', 'Pseudonymous subject code.', (row) => session(row).subjectCode),
    textColumn('visit_code', 'Visit code of the schedule.', (row) => session(row).visitCode),
    textColumn('timepoint_code', 'Time point code of the schedule.', (row) => session(row).timepointCode),
    textColumn('bronchodilator', 'pre or post bronchodilator.', (row) => session(row).bronchodilator),
  ];
}

const yesNo = (value: boolean): string => (value ? 'Y' : 'N');

/** One row per session. */
export const SESSIONS_TABLE: ReleaseTable<ReleaseSession> = {
  name: 'sessions',
  title: 'Sessions',
  rowIs: 'one locked spirometry session (subject, visit, time point, pre/post bronchodilator)',
  rowsOf: (session) => [session],
  columns: [
    ...sessionKeyColumns<ReleaseSession>((s) => s),
    textColumn('visit_name', 'Visit name.', (s) => s.visitName),
    integerColumn('visit_number', 'Order of the visit in the schedule.', (s) => s.visitNumber),
    textColumn('timepoint_name', 'Time point name.', (s) => s.timepointName),
    textColumn('tested_at_utc', 'When the test was done, ISO 8601 UTC.', (s) => s.testedAt),
    textColumn('tested_at_local', 'When the test was done, local time at the site with UTC offset.', (s) => localIsoWithOffset(s.testedAt, s.timeZone)),
    textColumn('time_zone', 'IANA time zone of the site.', (s) => s.timeZone),
    decimalColumn('age_years', 1, 'Age at the test (years).', (s) => s.ageYears),
    decimalColumn('height_cm', 1, 'Height (cm).', (s) => s.heightCm),
    decimalColumn('weight_kg', 1, 'Weight (kg), when given.', (s) => s.weightKg),
    textColumn('sex', 'female or male (for the reference equations).', (s) => s.sex),
    textColumn('technician_code', 'Code of the technician who ran the test.', (s) => s.technicianCode),
    textColumn('device_manufacturer', 'Spirometer manufacturer, when given.', (s) => s.deviceManufacturer),
    textColumn('device_model', 'Spirometer model, when given.', (s) => s.deviceModel),
    textColumn('device_serial_number', 'Spirometer serial number, when given.', (s) => s.deviceSerialNumber),
    integerColumn('effort_count', 'Efforts in the checked file.', (s) => s.effortCount),
    textColumn('lock_scope', 'Scope of the active lock covering the session (study, site, subject, visit, session).', (s) => s.lock.scope),
    textColumn('locked_at', 'When that lock was set, ISO 8601 UTC.', (s) => s.lock.lockedAt),
    textColumn('session_id', 'Tidemark session id.', (s) => s.id),
  ],
};

interface EffortRow {
  readonly session: ReleaseSession;
  readonly effort: ReleaseEffort;
}

/** One row per effort. */
export const EFFORTS_TABLE: ReleaseTable<EffortRow> = {
  name: 'efforts',
  title: 'Efforts',
  rowIs: 'one forced expiratory effort of a released session, with the engine suggestion and the final verdict',
  rowsOf: (session) => session.efforts.map((effort) => ({ session, effort })),
  columns: [
    ...sessionKeyColumns<EffortRow>((row) => row.session),
    integerColumn('effort_number', 'Effort number within the session (1 = first effort of the file).', (row) => row.effort.effortIndex + 1),
    textColumn('effort_label', 'Label of the effort in the file.', (row) => row.effort.label),
    decimalColumn('fev1_l', 3, 'FEV1 (L).', (row) => row.effort.fev1L),
    decimalColumn('fvc_l', 3, 'FVC (L).', (row) => row.effort.fvcL),
    decimalColumn('pef_l_per_s', 2, 'PEF (L/s).', (row) => row.effort.pefLPerS),
    decimalColumn('fef2575_l_per_s', 2, 'FEF25-75 (L/s).', (row) => row.effort.fef2575LPerS),
    decimalColumn('fet_s', 2, 'Forced expiratory time (s).', (row) => row.effort.fetS),
    decimalColumn('bev_l', 3, 'Back-extrapolated volume (L).', (row) => row.effort.bevL),
    textColumn('engine_fev1_verdict', 'FEV1 verdict suggested by the engine.', (row) => row.effort.suggestedFev1Verdict, 'verdict'),
    textColumn('engine_fvc_verdict', 'FVC verdict suggested by the engine.', (row) => row.effort.suggestedFvcVerdict, 'verdict'),
    textColumn('final_fev1_verdict', 'FEV1 verdict of the final read.', (row) => row.effort.fev1Verdict, 'verdict'),
    textColumn('final_fvc_verdict', 'FVC verdict of the final read.', (row) => row.effort.fvcVerdict, 'verdict'),
    textColumn('reader_overrode', 'Y when the final read differs from the engine on FEV1 or FVC.', (row) =>
      yesNo(row.effort.fev1Verdict !== row.effort.suggestedFev1Verdict || row.effort.fvcVerdict !== row.effort.suggestedFvcVerdict),
    ),
    textColumn('reported_fev1', 'Y when the reported FEV1 of the session comes from this effort.', (row) =>
      yesNo(row.session.read.result.fev1EffortIndex === row.effort.effortIndex),
    ),
    textColumn('reported_fvc', 'Y when the reported FVC of the session comes from this effort.', (row) =>
      yesNo(row.session.read.result.fvcEffortIndex === row.effort.effortIndex),
    ),
    textColumn('engine_findings', 'Finding codes of the engine, separated by ";".', (row) => row.effort.engineFindings.join(';')),
    textColumn('reader_findings', 'Finding codes the reader confirmed or added, separated by ";".', (row) => row.effort.readerFindings.join(';')),
    textColumn('reader_comment', "The reader's comment on the effort.", (row) => row.effort.readerComment),
    textColumn('effort_id', 'Tidemark effort id.', (row) => row.effort.id),
  ],
};

/** One row per final read. */
export const READS_TABLE: ReleaseTable<ReleaseSession> = {
  name: 'reads',
  title: 'Final reads',
  rowIs: 'the final over-read of one session (its per-effort verdicts are in the efforts table)',
  rowsOf: (session) => [session],
  columns: [
    ...sessionKeyColumns<ReleaseSession>((s) => s),
    textColumn('read_kind', 'first (single or agreeing dual read) or adjudication.', (s) => s.read.kind),
    textColumn('signed_by', 'Printed name of the reader who signed the read.', (s) => s.read.signerName),
    textColumn('signed_at', 'When the read was signed (meaning: authored), ISO 8601 UTC.', (s) => s.read.signedAt),
    textColumn('fev1_grade', 'FEV1 quality grade (ATS/ERS 2019).', (s) => s.read.result.fev1Grade, 'grade'),
    textColumn('fvc_grade', 'FVC quality grade (ATS/ERS 2019).', (s) => s.read.result.fvcGrade, 'grade'),
    decimalColumn('reported_fev1_l', 3, 'Reported FEV1 (L).', (s) => s.read.result.reportedFev1L),
    decimalColumn('reported_fvc_l', 3, 'Reported FVC (L).', (s) => s.read.result.reportedFvcL),
    decimalColumn('fev1_fvc', 3, 'FEV1/FVC of the reported values (ratio).', (s) => s.read.result.fev1FvcRatio),
    integerColumn('fev1_effort_number', 'Effort the reported FEV1 comes from.', (s) => effortNumber(s.read.result.fev1EffortIndex)),
    integerColumn('fvc_effort_number', 'Effort the reported FVC comes from.', (s) => effortNumber(s.read.result.fvcEffortIndex)),
    textColumn('endpoint_fev1', 'Y when the FEV1 may enter the endpoint analysis (protocol rule).', (s) => yesNo(s.read.result.endpointEligible.fev1)),
    textColumn('endpoint_fvc', 'Y when the FVC may enter the endpoint analysis (protocol rule).', (s) => yesNo(s.read.result.endpointEligible.fvc)),
    textColumn('endpoint_reasons', 'Why a value may not enter the endpoint analysis, separated by ";".', (s) => s.read.result.endpointEligible.reasons.join(';')),
    textColumn('read_id', 'Tidemark read id.', (s) => s.read.id),
    textColumn('session_id', 'Tidemark session id.', (s) => s.id),
  ],
};

function effortNumber(effortIndex: number | null): number | null {
  return effortIndex === null ? null : effortIndex + 1;
}

/** The plain tables, in file order. */
export const PLAIN_TABLES = [SESSIONS_TABLE, EFFORTS_TABLE, READS_TABLE] as const;

/** The cells of one row, in column order. */
export function cellsOf<Row>(columns: readonly ReleaseColumn<Row>[], row: Row): CellValue[] {
  return columns.map((column) => column.value(row));
}
