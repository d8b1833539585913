import type ExcelJS from 'exceljs';
import {
  PERFORMANCE_CAUTION,
  type ReaderPerformanceReport,
  type SitePerformanceReport,
} from '../../shared/contracts/oversight.js';

/** What the export holds: the two dashboards as they are shown. */
export interface PerformanceExport {
  readonly studyCode: string;
  readonly studyTitle: string;
  readonly sites: SitePerformanceReport;
  readonly readers: ReaderPerformanceReport;
}

/** One column of a table sheet: its header, width and how a row fills it. */
interface Column<T> {
  readonly header: string;
  readonly width: number;
  readonly value: (row: T) => ExcelJS.CellValue;
}

type SiteRow = SitePerformanceReport['sites'][number];
type ReaderRow = ReaderPerformanceReport['readers'][number];

const GRADES = ['A', 'B', 'C', 'D', 'E', 'F', 'U'] as const;

/** Rounds for display; blank when there is no value. */
const rounded = (value: number | null, digits = 1): ExcelJS.CellValue => (value === null ? null : Number(value.toFixed(digits)));

const SITE_COLUMNS: readonly Column<SiteRow>[] = [
  { header: 'Site', width: 8, value: (s) => s.siteNumber },
  { header: 'Site name', width: 32, value: (s) => s.siteName },
  { header: 'Sessions', width: 10, value: (s) => s.sessions.total },
  { header: 'Awaiting file', width: 10, value: (s) => s.sessions.awaitingFile },
  { header: 'Checked', width: 10, value: (s) => s.sessions.checked },
  { header: 'Rejected', width: 10, value: (s) => s.sessions.rejected },
  { header: 'Files received', width: 10, value: (s) => s.sessions.filesReceived },
  { header: 'Files rejected', width: 10, value: (s) => s.sessions.filesRejected },
  { header: 'Efforts (engine)', width: 10, value: (s) => s.engineAcceptability.efforts },
  { header: 'FEV1 acceptable, engine (%)', width: 12, value: (s) => rounded(s.engineAcceptability.fev1.acceptablePercent) },
  { header: 'FVC acceptable, engine (%)', width: 12, value: (s) => rounded(s.engineAcceptability.fvc.acceptablePercent) },
  { header: 'Efforts (final reads)', width: 10, value: (s) => s.readerAcceptability.efforts },
  { header: 'FEV1 acceptable, readers (%)', width: 12, value: (s) => rounded(s.readerAcceptability.fev1.acceptablePercent) },
  { header: 'FVC acceptable, readers (%)', width: 12, value: (s) => rounded(s.readerAcceptability.fvc.acceptablePercent) },
  ...GRADES.map((grade) => ({ header: `FEV1 grade ${grade}`, width: 8, value: (s: SiteRow) => s.grades.fev1[grade] })),
  ...GRADES.map((grade) => ({ header: `FVC grade ${grade}`, width: 8, value: (s: SiteRow) => s.grades.fvc[grade] })),
  { header: 'Graded by final read', width: 10, value: (s) => s.grades.fromFinalReads },
  { header: 'Graded by engine', width: 10, value: (s) => s.grades.fromEngine },
  { header: 'Sessions with feedback', width: 10, value: (s) => s.turnaround.sessions },
  { header: 'Turnaround median (h)', width: 12, value: (s) => rounded(s.turnaround.medianHours) },
  { header: 'Turnaround p90 (h)', width: 12, value: (s) => rounded(s.turnaround.p90Hours) },
  { header: 'Within target (%)', width: 10, value: (s) => rounded(s.turnaround.withinTargetPercent) },
  { header: 'Open queries', width: 10, value: (s) => s.openQueries.count },
  { header: 'Oldest open query (days)', width: 12, value: (s) => rounded(s.openQueries.oldestAgeDays) },
  { header: 'Median open query age (days)', width: 12, value: (s) => rounded(s.openQueries.medianAgeDays) },
  { header: 'Calibration checks', width: 10, value: (s) => s.calibration.checks },
  { header: 'Within tolerance', width: 10, value: (s) => s.calibration.withinTolerance },
  { header: 'Calibration compliance (%)', width: 12, value: (s) => rounded(s.calibration.compliancePercent) },
  { header: 'Last check (UTC)', width: 24, value: (s) => s.calibration.lastCheckedAt },
  { header: 'Days since last check', width: 10, value: (s) => rounded(s.calibration.daysSinceLastCheck) },
];

const READER_COLUMNS: readonly Column<ReaderRow>[] = [
  { header: 'Reader', width: 28, value: (r) => r.name },
  { header: 'Signed reads', width: 10, value: (r) => r.signedReads },
  { header: 'First reads', width: 10, value: (r) => r.signedByKind.first },
  { header: 'Second reads', width: 10, value: (r) => r.signedByKind.second },
  { header: 'Adjudications', width: 10, value: (r) => r.signedByKind.adjudication },
  { header: 'In progress', width: 10, value: (r) => r.inProgress },
  { header: 'Signed in last 30 days', width: 10, value: (r) => r.signedLast30Days },
  { header: 'Median read time (min)', width: 12, value: (r) => rounded(r.medianReadMinutes) },
  { header: 'Verdicts given', width: 10, value: (r) => r.verdicts },
  { header: 'Overrides of engine', width: 10, value: (r) => r.overrides },
  { header: 'Overrides (%)', width: 10, value: (r) => rounded(r.overridePercent) },
  { header: 'Verdicts compared (dual reads)', width: 12, value: (r) => r.agreement.comparedVerdicts },
  { header: 'Agreement (%)', width: 10, value: (r) => rounded(r.agreement.percentAgreement) },
  { header: "Cohen's kappa", width: 10, value: (r) => rounded(r.agreement.kappa, 3) },
];

/** The site and reader dashboards as an xlsx workbook: one sheet each, and a readme with the caution. */
export async function performanceWorkbook(data: PerformanceExport): Promise<Buffer> {
  // exceljs is loaded at the first workbook, not at start: the server needs it only then.
  const { default: excel } = await import('exceljs');
  const workbook = new excel.Workbook();
  workbook.creator = 'Tidemark';
  workbook.created = new Date(data.sites.generatedAt);

  const readme = workbook.addWorksheet('Read me');
  readme.columns = [{ width: 30 }, { width: 110 }];
  const lines: [string, string][] = [
    ['Study', `${data.studyCode}: ${data.studyTitle}`],
    ['Generated (UTC)', data.sites.generatedAt],
    ['Caution', PERFORMANCE_CAUTION],
    ['Sites sheet', 'One row per site, as shown on the site performance dashboard.'],
    ['Acceptability', "Engine: the suggested verdicts on the efforts of each session's current file. Readers: the verdicts of final over-reads."],
    ['Grades', "From the session's final over-read where it is final, otherwise from the engine's first pass."],
    [
      'Turnaround',
      `Hours from the receipt of the session's current file to the release of its feedback; median and 90th percentile ` +
        `(nearest rank). Target: ${data.sites.turnaroundTargetHours} h.`,
    ],
    ['Open queries', 'Queries not closed (open or answered), with their age in days at the time generated.'],
    ['Calibration', 'Syringe checks within tolerance out of all checks, and days since the latest check.'],
    ['Readers sheet', 'One row per over-reader, as shown on the reader performance dashboard.'],
    ['Overrides', "Reader verdicts (FEV1 and FVC per effort) that differ from the engine's suggestion."],
    ['Agreement', data.readers.method],
    [
      'Overall agreement',
      `${data.readers.overall.comparedSessions} dual-read sessions, ${data.readers.overall.comparedVerdicts} verdicts compared; ` +
        `agreement ${data.readers.overall.percentAgreement === null ? 'n/a' : `${data.readers.overall.percentAgreement.toFixed(1)} %`}, ` +
        `kappa ${data.readers.overall.kappa === null ? 'n/a' : data.readers.overall.kappa.toFixed(3)}.`,
    ],
    ['Blank cells', 'No value: nothing to count yet.'],
  ];
  for (const line of lines) readme.addRow(line);
  readme.getColumn(1).font = { bold: true };
  readme.getColumn(2).alignment = { wrapText: true, vertical: 'top' };

  addTable(workbook, 'Sites', SITE_COLUMNS, data.sites.sites);
  addTable(workbook, 'Readers', READER_COLUMNS, data.readers.readers);
  return Buffer.from(await workbook.xlsx.writeBuffer());
}

function addTable<T>(workbook: ExcelJS.Workbook, name: string, columns: readonly Column<T>[], rows: readonly T[]): void {
  const sheet = workbook.addWorksheet(name, { views: [{ state: 'frozen', ySplit: 1 }] });
  sheet.columns = columns.map((column) => ({ header: column.header, width: column.width }));
  sheet.getRow(1).font = { bold: true };
  sheet.getRow(1).alignment = { wrapText: true, vertical: 'top' };
  for (const row of rows) sheet.addRow(columns.map((column) => column.value(row)));
}
