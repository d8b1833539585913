/**
 * Writes the data files of one release into a folder, streaming, each hashed as it is written.
 *
 * One pass over the sessions (in release order, a batch at a time from the database) writes the
 * CSV tables and SDTM RE as CSV, measuring the RE texts on the way. The SAS transport file needs
 * those lengths in its header, so it is written next, from re.csv; the workbook is written from
 * the CSV files too (./release-workbook.ts, on another thread when it can). Reading the database
 * once and the CSV files back costs far less than assembling every session again for each file,
 * and the transport file and workbook then hold exactly the values of the CSV files. Memory stays
 * flat whatever the size of the study.
 */
import fs from 'node:fs';
import path from 'node:path';
import { buildDefineDocument, renderDefineHtml } from './define-metadata.js';
import { csvHeader, csvLineWriter } from './release-csv.js';
import { HashingFileSink } from './release-file-sink.js';
import type { ReleaseSession } from './release-model.js';
import type { StoredDigest } from './release-store.js';
import { EFFORTS_TABLE, READS_TABLE, SESSIONS_TABLE } from './release-tables.js';
import type { WorkbookReadme } from './release-xlsx.js';
import { RE, RE_COLUMNS, RE_VARIABLES, ReSequencer, type ReRow } from './sdtm-re.js';
import { XptCsvTranscoder } from './xpt-from-csv.js';
import { xptHeader, type XptVariable } from './xpt-writer.js';

/** The released sessions, in release order. */
export interface ReleaseSource {
  readonly sessionCount: number;
  readonly effortCount: number;
  /** Without efforts (only `effortCount`) when a pass does not need them. */
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

/** What the manifest counts. */
export interface ReleaseCounts {
  readonly sessions: number;
  readonly efforts: number;
  readonly reRecords: number;
}

/** The CSV files of the pass over the sessions, which the transport file and the workbook are written from. */
export interface TableFiles {
  readonly sessions: string;
  readonly efforts: string;
  readonly reads: string;
  readonly re: string;
  /** The derived RE records alone (REDRVFL = Y), for the workbook's RE sheet; not a file of the release. */
  readonly reDerived: string;
}

/** What the workbook is written from: the CSV files, and how many records they hold. */
export interface WorkbookTables {
  readonly files: TableFiles;
  readonly counts: ReleaseCounts & { readonly derivedRecords: number };
}

/** What the pass over the sessions wrote and measured. */
export interface TablesOutcome extends WorkbookTables {
  /** Longest text of each RE variable (1 for numbers and for texts always empty), in {@link RE_VARIABLES} order. */
  readonly reLengths: readonly number[];
}

/**
 * Told of each file as soon as it is complete (the caller may store it while the next is written);
 * {@link isReleaseFileName} tells the files of the release from those only the build needs.
 */
export type FileReady = (file: BuiltFile) => void;

/** Called as the work advances: the phase in words, units done and units in all. */
export type BuildProgress = (phase: string, done: number, total: number) => void;

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

/** Whether a file is one of the release's (rather than one only its build needs). */
export function isReleaseFileName(name: string): boolean {
  return RELEASE_FILES.some((file) => file.name === name);
}

const TEXT_COLUMNS = RE_COLUMNS.flatMap((column, index) => (column.type === 'text' ? [index] : []));
/** Not a file of the release: the workbook's RE sheet is written from it. */
const RE_DERIVED_FILE = 're-derived.part.csv';
/** Bytes read from a file at a time. */
const READ_BLOCK_BYTES = 256 * 1024;
/** The phases of {@link writeTables}, as the progress bar names them. */
export const TABLE_PHASES = { sessions: 'Writing the session tables', efforts: 'Writing the efforts and SDTM RE' } as const;
/** Sessions between two progress reports. */
const SESSIONS_PER_REPORT = 100;

/** Where the CSV files of a release are written in its folder. */
export function tableFilesIn(folder: string): TableFiles {
  return {
    sessions: path.join(folder, 'sessions.csv'),
    efforts: path.join(folder, 'efforts.csv'),
    reads: path.join(folder, 'reads.csv'),
    re: path.join(folder, 're.csv'),
    reDerived: path.join(folder, RE_DERIVED_FILE),
  };
}

/**
 * The passes over the sessions, each file told to `ready` as soon as it is complete (a file of
 * the release or not: the derived RE records are kept apart for the workbook). First the session
 * tables (sessions.csv, reads.csv), which need no efforts: the workbook's first sheet can start
 * from them while the second pass writes efforts.csv, re.csv and the derived records.
 */
export async function writeTables(source: ReleaseSource, context: BuildContext, progress: BuildProgress, ready: FileReady): Promise<TablesOutcome> {
  const files = tableFilesIn(context.folder);
  const open = async (filePath: string, header: string) => {
    const sink = new HashingFileSink(filePath);
    await sink.writeText(header);
    return sink;
  };
  const finish = async (name: string, sink: HashingFileSink) => {
    ready({ name, contentType: RELEASE_FILES.find((file) => file.name === name)?.contentType ?? CSV_TYPE, path: sink.path, digest: await sink.close() });
  };

  const sessionPhase = TABLE_PHASES.sessions;
  progress(sessionPhase, 0, source.sessionCount);
  const sessionsSink = await open(files.sessions, csvHeader(SESSIONS_TABLE));
  const readsSink = await open(files.reads, csvHeader(READS_TABLE));
  const sessionLine = csvLineWriter(SESSIONS_TABLE.columns);
  const readLine = csvLineWriter(READS_TABLE.columns);
  let sessions = 0;
  for (const session of source.sessions({ withEfforts: false })) {
    await sessionsSink.writeText(sessionLine(session));
    await readsSink.writeText(readLine(session));
    if (++sessions % SESSIONS_PER_REPORT === 0) progress(sessionPhase, sessions, source.sessionCount);
  }
  await finish('sessions.csv', sessionsSink);
  await finish('reads.csv', readsSink);

  const effortPhase = TABLE_PHASES.efforts;
  progress(effortPhase, 0, source.sessionCount);
  const effortsSink = await open(files.efforts, csvHeader(EFFORTS_TABLE));
  const reSink = await open(files.re, csvHeader({ columns: RE_COLUMNS }));
  const derivedSink = await open(files.reDerived, csvHeader({ columns: RE_COLUMNS }));
  const effortLine = csvLineWriter(EFFORTS_TABLE.columns);
  const reLine = csvLineWriter(RE_COLUMNS);
  const lengths = RE_COLUMNS.map(() => 1);
  const sequencer = new ReSequencer();
  let efforts = 0;
  let reRecords = 0;
  let derivedRecords = 0;
  let reText = '';
  let derivedText = '';
  const writeReRow = (row: ReRow) => {
    reRecords++;
    const line = reLine(row);
    reText += line;
    if (row[RE.REDRVFL] === 'Y') {
      derivedRecords++;
      derivedText += line;
    }
    for (const index of TEXT_COLUMNS) {
      const value = row[index] as string | null;
      if (value !== null && value.length > lengths[index]) lengths[index] = value.length;
    }
  };
  let done = 0;
  for (const session of source.sessions({ withEfforts: true })) {
    let effortText = '';
    for (const row of EFFORTS_TABLE.rowsOf(session)) effortText += effortLine(row);
    efforts += session.efforts.length;
    await effortsSink.writeText(effortText);
    sequencer.emit(session, writeReRow);
    await reSink.writeText(reText);
    await derivedSink.writeText(derivedText);
    reText = '';
    derivedText = '';
    if (++done % SESSIONS_PER_REPORT === 0) progress(effortPhase, done, source.sessionCount);
  }
  if (done !== sessions) throw new Error(`The passes over the sessions read ${sessions} and ${done} sessions`);
  await finish('efforts.csv', effortsSink);
  await finish('re.csv', reSink);
  await finish(RE_DERIVED_FILE, derivedSink);
  progress(effortPhase, done, source.sessionCount);
  return { counts: { sessions, efforts, reRecords, derivedRecords }, reLengths: lengths, files };
}

/**
 * The SAS transport file, written from re.csv (./xpt-from-csv.ts), then the define document.
 * re.csv holds every RE text as the transport file does (ASCII, see sdtm-re) and every number as
 * the shortest text that reads back to the same double, so the two files hold the same values.
 */
export async function writeTransportAndDefine(tables: TablesOutcome, context: BuildContext, progress: BuildProgress, ready: FileReady): Promise<void> {
  const phase = 'Writing the SAS transport file';
  const total = tables.counts.reRecords;
  progress(phase, 0, total);
  const variables: XptVariable[] = RE_COLUMNS.map((column, index) => ({
    name: column.name,
    label: column.label,
    type: column.type === 'text' ? 'char' : 'num',
    length: column.type === 'text' ? tables.reLengths[index] : 8,
  }));
  const sink = (name: string) => new HashingFileSink(path.join(context.folder, name));
  const finish = async (name: string, fileSink: HashingFileSink) => {
    ready({ name, contentType: contentTypeOf(name), path: fileSink.path, digest: await fileSink.close() });
  };
  const xpt = sink('re.xpt');
  await xpt.write(xptHeader({ name: 'RE', label: 'Respiratory System Findings', variables, createdAt: new Date(context.dataAsOf) }));
  const transcoder = new XptCsvTranscoder(variables);
  // One read block and a few output chunks, reused: about 500 MB pass through here.
  const block = Buffer.allocUnsafe(READ_BLOCK_BYTES);
  const csv = await fs.promises.open(tables.files.re, 'r');
  try {
    for (;;) {
      const { bytesRead } = await csv.read(block, 0, block.length, null);
      if (bytesRead === 0) break;
      for (const chunk of transcoder.push(block.subarray(0, bytesRead))) {
        await xpt.writeThrough(chunk);
        transcoder.recycle(chunk);
      }
      progress(phase, transcoder.count, total);
    }
  } finally {
    await csv.close();
  }
  transcoder.end();
  if (transcoder.count !== total) throw new Error(`re.csv holds ${transcoder.count} records where ${total} were written`);
  await xpt.write(transcoder.finish());
  await finish('re.xpt', xpt);

  // The define document: no pass over the data, only what the pass counted and measured.
  const define = buildDefineDocument({
    study: context.study,
    dataAsOf: context.dataAsOf,
    reLengths: new Map(RE_VARIABLES.map((name, index) => [name, tables.reLengths[index]])),
    reRecords: tables.counts.reRecords,
    tables: [
      { table: SESSIONS_TABLE, rows: tables.counts.sessions },
      { table: EFFORTS_TABLE, rows: tables.counts.efforts },
      { table: READS_TABLE, rows: tables.counts.sessions },
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
}
