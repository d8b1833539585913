/**
 * Writes the files of one release into a folder, streaming: the sessions pass through in release
 * order, a batch at a time, once for the CSV tables (which also measures the transport lengths),
 * once for the SAS transport file and once per workbook sheet, and each file is hashed as it is
 * written. Memory stays flat whatever the size of the study.
 */
import path from 'node:path';
import { buildDefineDocument, renderDefineHtml } from './define-metadata.js';
import { csvHeader, csvLine } from './release-csv.js';
import { HashingFileSink } from './release-file-sink.js';
import type { ReleaseSession } from './release-model.js';
import type { StoredDigest } from './release-store.js';
import { EFFORTS_TABLE, PLAIN_TABLES, READS_TABLE, SESSIONS_TABLE } from './release-tables.js';
import { ReleaseWorkbook, type WorkbookReadme } from './release-xlsx.js';
import { RE_COLUMNS, RE_VARIABLES, ReSequencer, type ReRow } from './sdtm-re.js';
import { xptHeader, XptObservationEncoder, type XptVariable } from './xpt-writer.js';

/** The released sessions, readable as many times as the build needs. */
export interface ReleaseSource {
  readonly sessionCount: number;
  /** Sessions in release order; without efforts when a pass does not need them (cheaper). */
  sessions(options: { readonly withEfforts: boolean }): Iterable<ReleaseSession>;
}

/** What the workbook's Readme and the define document say about the release. */
export interface BuildContext {
  readonly folder: string;
  readonly study: { readonly code: string; readonly title: string; readonly sponsor: string };
  readonly releaseId: string;
  readonly dataCutAt: string;
  readonly dataAsOf: string;
  readonly signer: WorkbookReadme['signer'];
  readonly caution: string;
}

/** One written file. */
export interface BuiltFile {
  readonly name: string;
  readonly contentType: string;
  readonly path: string;
  readonly digest: StoredDigest;
}

export interface BuildOutcome {
  readonly counts: { readonly sessions: number; readonly efforts: number; readonly reRecords: number };
}

/** Told of each file as soon as it is complete (the caller may store it while the next is written). */
export type FileReady = (file: BuiltFile) => void;

/** Called as sessions pass: the phase in words, units done and units in all. */
export type BuildProgress = (phase: string, done: number, total: number) => void;

/** Passes over the sessions for the data files (CSV, transport) and for the workbook (one per sheet). */
export const DATA_PASSES = 2;
export const WORKBOOK_PASSES = 4;

const CSV_TYPE = 'text/csv; charset=utf-8';
export const RELEASE_FILES: readonly { readonly name: string; readonly contentType: string; readonly holds: string }[] = [
  { name: 'sessions.csv', contentType: CSV_TYPE, holds: SESSIONS_TABLE.rowIs },
  { name: 'efforts.csv', contentType: CSV_TYPE, holds: EFFORTS_TABLE.rowIs },
  { name: 'reads.csv', contentType: CSV_TYPE, holds: READS_TABLE.rowIs },
  { name: 're.csv', contentType: CSV_TYPE, holds: 'the SDTM RE domain as CSV (the same records as re.xpt)' },
  { name: 're.xpt', contentType: 'application/x-sas-xport', holds: 'the SDTM RE domain as a SAS transport file, version 5' },
  { name: 'define.json', contentType: 'application/json', holds: 'define-style metadata: variables, labels, types, lengths, codelists' },
  { name: 'define.html', contentType: 'text/html; charset=utf-8', holds: 'the define-style metadata as a page to read' },
  { name: 'release.xlsx', contentType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet', holds: 'this workbook' },
];

export const contentTypeOf = (name: string): string => RELEASE_FILES.find((file) => file.name === name)!.contentType;
const TEXT_COLUMNS = RE_COLUMNS.flatMap((column, index) => (column.type === 'text' ? [index] : []));

/**
 * Writes the data files of the release (CSV tables, SDTM RE as CSV and transport, define) into
 * `context.folder`, telling `ready` of each as it is done. The workbook is written apart
 * ({@link writeWorkbookFile}), on another thread when it can be.
 */
export async function buildDataFiles(source: ReleaseSource, context: BuildContext, progress: BuildProgress, ready: FileReady): Promise<BuildOutcome> {
  const total = source.sessionCount * DATA_PASSES;
  let done = 0;
  const step = (phase: string) => {
    done++;
    if (done % 100 === 0 || done === total) progress(phase, done, total);
  };
  const sink = (name: string) => new HashingFileSink(path.join(context.folder, name));
  const finish = async (name: string, fileSink: HashingFileSink) => {
    ready({ name, contentType: contentTypeOf(name), path: fileSink.path, digest: await fileSink.close() });
  };

  // Pass 1: the CSV tables, measuring the RE text lengths for the transport file on the way.
  const phase1 = 'Writing the CSV tables and SDTM RE';
  progress(phase1, done, total);
  const tableSinks = PLAIN_TABLES.map((table) => ({ table, sink: sink(`${table.name}.csv`) }));
  const reSink = sink('re.csv');
  for (const { table, sink: tableSink } of tableSinks) await tableSink.writeText(csvHeader(table));
  await reSink.writeText(csvHeader({ columns: RE_COLUMNS }));
  const lengths = RE_COLUMNS.map(() => 1);
  const sequencer = new ReSequencer();
  let efforts = 0;
  let reRecords = 0;
  let sessions = 0;
  let reText = '';
  const writeReRow = (row: ReRow) => {
    reRecords++;
    reText += csvLine(RE_COLUMNS, row);
    for (const index of TEXT_COLUMNS) {
      const value = row[index] as string | null;
      if (value !== null && value.length > lengths[index]) lengths[index] = value.length;
    }
  };
  for (const session of source.sessions({ withEfforts: true })) {
    sessions++;
    efforts += session.efforts.length;
    await tableSinks[0].sink.writeText(csvLines(SESSIONS_TABLE, session));
    await tableSinks[1].sink.writeText(csvLines(EFFORTS_TABLE, session));
    await tableSinks[2].sink.writeText(csvLines(READS_TABLE, session));
    sequencer.emit(session, writeReRow);
    await reSink.writeText(reText);
    reText = '';
    step(phase1);
  }
  for (const { table, sink: tableSink } of tableSinks) await finish(`${table.name}.csv`, tableSink);
  await finish('re.csv', reSink);

  // Pass 2: the SAS transport file; its texts are already ASCII (see sdtm-re), so lengths are in bytes.
  const phase2 = 'Writing the SAS transport file';
  const variables: XptVariable[] = RE_COLUMNS.map((column, index) => ({
    name: column.name,
    label: column.label,
    type: column.type === 'text' ? 'char' : 'num',
    length: column.type === 'text' ? lengths[index] : 8,
  }));
  const xpt = sink('re.xpt');
  await xpt.write(xptHeader({ name: 'RE', label: 'Respiratory System Findings', variables, createdAt: new Date(context.dataAsOf) }));
  const encoder = new XptObservationEncoder(variables);
  const xptSequencer = new ReSequencer();
  const chunks: Buffer[] = [];
  const encodeRow = (row: ReRow) => {
    const chunk = encoder.add(row);
    if (chunk) chunks.push(chunk);
  };
  for (const session of source.sessions({ withEfforts: true })) {
    xptSequencer.emit(session, encodeRow);
    for (const chunk of chunks.splice(0)) await xpt.write(chunk);
    step(phase2);
  }
  await xpt.write(encoder.finish());
  await finish('re.xpt', xpt);

  // The define document: no pass over the data, only what the passes counted and measured.
  const define = buildDefineDocument({
    study: context.study,
    dataAsOf: context.dataAsOf,
    reLengths: new Map(RE_VARIABLES.map((name, index) => [name, lengths[index]])),
    reRecords,
    tables: [
      { table: SESSIONS_TABLE, rows: sessions },
      { table: EFFORTS_TABLE, rows: efforts },
      { table: READS_TABLE, rows: sessions },
    ],
  });
  for (const [name, text] of [
    ['define.json', `${JSON.stringify(define, null, 2)}\n`],
    ['define.html', renderDefineHtml(define)],
  ] as const) {
    const defineSink = sink(name);
    await defineSink.writeText(text);
    await finish(name, defineSink);
  }

  return { counts: { sessions, efforts, reRecords } };
}

function csvLines<Row>(table: { readonly columns: Parameters<typeof csvLine<Row>>[0]; readonly rowsOf: (session: ReleaseSession) => readonly Row[] }, session: ReleaseSession): string {
  let text = '';
  for (const row of table.rowsOf(session)) text += csvLine(table.columns, row);
  return text;
}

/** Writes the workbook to `filePath`, one sheet per pass over the sessions; returns its digest. */
export async function writeWorkbookFile(source: ReleaseSource, context: BuildContext, filePath: string, sessionDone: () => void): Promise<StoredDigest> {
  const workbookSink = new HashingFileSink(filePath);
  const workbook = new ReleaseWorkbook(workbookSink.asWritable(), new Date(context.dataAsOf));
  workbook.writeReadme({
    studyCode: context.study.code,
    studyTitle: context.study.title,
    sponsor: context.study.sponsor,
    releaseId: context.releaseId,
    dataCutAt: context.dataCutAt,
    dataAsOf: context.dataAsOf,
    signer: context.signer,
    caution: context.caution,
    files: RELEASE_FILES.filter((file) => file.name !== 'release.xlsx').map(({ name, holds }) => ({ name, holds })),
    notes: [
      'Sheets Sessions, Efforts and Final reads hold the same rows as sessions.csv, efforts.csv and reads.csv.',
      'Sheet RE holds the derived records of SDTM RE (REDRVFL = Y: reported FEV1, FVC, FEV1/FVC and the grades of each session), ' +
        'numbered as in the whole domain; every record, one per test per effort, is in re.csv and re.xpt.',
      'Decimals are rounded as in the CSV files; times are ISO 8601, UTC unless an offset is shown.',
    ],
  });
  const counted = function* (withEfforts: boolean): Generator<ReleaseSession> {
    for (const session of source.sessions({ withEfforts })) {
      yield session;
      sessionDone();
    }
  };
  await workbook.writeTable(SESSIONS_TABLE.title, SESSIONS_TABLE.columns, counted(false));
  await workbook.writeTable(EFFORTS_TABLE.title, EFFORTS_TABLE.columns, flatten(counted(true), (session) => EFFORTS_TABLE.rowsOf(session)));
  await workbook.writeTable(READS_TABLE.title, READS_TABLE.columns, counted(false));
  const sequencer = new ReSequencer();
  await workbook.writeTable(
    'RE',
    RE_COLUMNS,
    flatten(counted(false), (session) => {
      const rows: ReRow[] = [];
      sequencer.emitDerived(session, (row) => rows.push([...row]));
      return rows;
    }),
  );
  await workbook.finish();
  return workbookSink.close();
}

function* flatten<T, U>(items: Iterable<T>, expand: (item: T) => readonly U[]): Generator<U> {
  for (const item of items) yield* expand(item);
}
