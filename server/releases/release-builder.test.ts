/**
 * The release files written the streaming way (passes over the sessions for the CSV files, the
 * transport file and the workbook written from them as they grow) hold what the sessions say: re.xpt is the
 * transport file of the SDTM RE records themselves (SAS technical note TS-140 layout), the
 * workbook's sheets hold the CSV rows as numbers and texts (common practice for a data listing),
 * and every file's digest is that of its bytes. Demo data, fictional.
 */
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from '@jest/globals';
import ExcelJS from 'exceljs';
import { parse } from 'csv-parse/sync';
import { pino } from 'pino';
import { tableFilesIn, writeTables, writeTransportAndDefine, type BuildContext, type BuiltFile, type ReleaseSource } from './release-builder.js';
import type { ReleaseEffort, ReleaseSession } from './release-model.js';
import { startWorkbook, type WorkbookJob } from './release-xlsx-worker.js';
import { SESSIONS_TABLE } from './release-tables.js';
import { RE_COLUMNS, ReSequencer, type ReRow } from './sdtm-re.js';
import { writeXpt } from './xpt-writer.js';

const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-release-build-'));
afterAll(() => fs.rmSync(folder, { recursive: true, force: true }));

function effort(index: number, overrides: Partial<ReleaseEffort> = {}): ReleaseEffort {
  return {
    id: `effort-${index}`,
    effortIndex: index,
    label: `Trial ${index + 1}`,
    fev1L: 2.3456 + index / 10,
    fvcL: 3.2104,
    pefLPerS: 6.789,
    fef2575LPerS: 2.111,
    fetS: 7.456,
    bevL: -0.0004,
    suggestedFev1Verdict: 'acceptable',
    suggestedFvcVerdict: 'acceptable',
    fev1Verdict: 'acceptable',
    fvcVerdict: 'acceptable',
    engineFindings: [],
    readerFindings: [],
    readerComment: '',
    ...overrides,
  };
}

function session(id: string, subjectCode: string, visitNumber: number, efforts: ReleaseEffort[]): ReleaseSession {
  return {
    id,
    studyCode: 'DEMO-01',
    siteNumber: '101',
    subjectCode,
    visitCode: `V${visitNumber}`,
    visitName: visitNumber === 2 ? 'Visite 2, Zürich' : `Visit ${visitNumber}`,
    visitNumber,
    timepointCode: 'T0',
    timepointName: 'Pre-dose',
    timepointNumber: 1,
    bronchodilator: 'pre',
    testedAt: '2026-07-01T08:15:00.000Z',
    timeZone: 'Europe/Zurich',
    ageYears: 61.5,
    heightCm: 170,
    weightKg: null,
    sex: 'female',
    technicianCode: 'T1',
    deviceManufacturer: 'Demo devices',
    deviceModel: null,
    deviceSerialNumber: 'SN-1',
    lock: { scope: 'study', lockedAt: '2026-08-01T00:00:00.000Z' },
    effortCount: efforts.length,
    read: {
      id: `read-${id}`,
      kind: 'first',
      signerName: 'Dr Demo Reader',
      signedAt: '2026-07-02T00:00:00.000Z',
      result: {
        fev1Grade: 'A',
        fvcGrade: 'C',
        reportedFev1L: 2.4456,
        reportedFvcL: null,
        fev1FvcRatio: null,
        fev1EffortIndex: 1,
        fvcEffortIndex: null,
        endpointEligible: { fev1: true, fvc: false, reasons: ['FVC grade C'] },
      },
    },
    efforts,
  };
}

const SESSIONS = [
  session('s1', '101-001', 1, [effort(0), effort(1, { fev1Verdict: 'usable', readerComment: 'Cough at 0.6 s, "early" end,\nsee trace', readerFindings: ['cough'] })]),
  session('s2', '101-001', 2, [effort(0, { fev1L: null, engineFindings: ['hesitation', 'cough'] })]),
  session('s3', '101-002', 1, [effort(0), effort(1), effort(2, { fvcVerdict: 'not_acceptable' })]),
];

const CONTEXT: BuildContext = {
  folder,
  study: { code: 'DEMO-01', title: 'A fictional study', sponsor: 'Demo sponsor' },
  releaseId: 'release-1',
  dataCutAt: '2026-08-02T00:00:00.000Z',
  dataAsOf: '2026-07-02T00:00:00.000Z',
  signer: { printedName: 'Demo Data Manager', meaning: 'released', signedAt: '2026-08-02T00:00:00.000Z' },
  caution: 'Demo caution.',
};

const sha256 = (bytes: Buffer) => createHash('sha256').update(bytes).digest('hex');

const SOURCE: ReleaseSource = {
  sessionCount: SESSIONS.length,
  effortCount: SESSIONS.reduce((sum, each) => sum + each.efforts.length, 0),
  sessions: ({ withEfforts }) => (withEfforts ? SESSIONS : SESSIONS.map((each) => ({ ...each, efforts: [] }))),
};

describe('the files of a release, written in passes over the sessions, the workbook beside them', () => {
  const built = new Map<string, BuiltFile>();
  const warnings: string[] = [];
  const rows: number[] = [];
  let workbook: WorkbookJob;
  afterAll(() => workbook?.stop());

  it('writes the CSV tables and the transport file, each with the digest of its bytes, telling the workbook as each is complete', async () => {
    const logger = pino({ level: 'warn' }, { write: (line: string) => void warnings.push(line) });
    workbook = startWorkbook({ files: tableFilesIn(folder), context: CONTEXT, filePath: path.join(folder, 'release.xlsx') }, (count) => rows.push(count), logger);
    const ready = (file: BuiltFile) => {
      built.set(file.name, file);
      workbook.fileComplete(file.path, file.digest.sizeBytes);
    };
    const tables = await writeTables(SOURCE, CONTEXT, () => undefined, ready);
    await writeTransportAndDefine(tables, CONTEXT, () => undefined, ready);
    expect([...built.keys()].sort()).toEqual(['define.html', 'define.json', 'efforts.csv', 're-derived.part.csv', 're.csv', 're.xpt', 'reads.csv', 'sessions.csv']);
    for (const file of built.values()) {
      const bytes = fs.readFileSync(file.path);
      expect(file.digest).toEqual({ sha256: sha256(bytes), sizeBytes: bytes.length });
    }
    expect(tables.counts).toEqual({ sessions: 3, efforts: 6, reRecords: 6 * 9 + 3 * 5, derivedRecords: 3 * 5 });
    expect(parse(fs.readFileSync(built.get('sessions.csv')!.path), { columns: true })).toEqual(
      SESSIONS.map((each) => expect.objectContaining({ session_id: each.id, effort_count: String(each.efforts.length) })),
    );
  });

  it('writes re.xpt as the transport file of the RE records themselves, texts as long as the longest', () => {
    const records: ReRow[] = [];
    const sequencer = new ReSequencer();
    for (const each of SESSIONS) sequencer.emit(each, (row) => records.push([...row]));
    const lengths = RE_COLUMNS.map((column, index) =>
      Math.max(1, ...records.map((record) => (column.type === 'text' && typeof record[index] === 'string' ? (record[index] as string).length : 1))),
    );
    const expected = writeXpt(
      {
        name: 'RE',
        label: 'Respiratory System Findings',
        createdAt: new Date(CONTEXT.dataAsOf),
        variables: RE_COLUMNS.map((column, index) => ({
          name: column.name,
          label: column.label,
          type: column.type === 'text' ? 'char' : 'num',
          length: column.type === 'text' ? lengths[index] : 8,
        })),
      },
      records,
    );
    expect(fs.readFileSync(built.get('re.xpt')!.path).equals(expected)).toBe(true);
  });

  it('writes the workbook on its own thread from the CSV files: numbers as numbers, texts as written, empty cells empty', async () => {
    const digest = await workbook.done;
    const bytes = fs.readFileSync(path.join(folder, 'release.xlsx'));
    expect(digest).toEqual({ sha256: sha256(bytes), sizeBytes: bytes.length });
    expect(warnings).toEqual([]);
    expect(rows.reduce((sum, count) => sum + count, 0)).toBe(3 * 2 + 6 + 3 * 5);

    const excel = new ExcelJS.Workbook();
    await excel.xlsx.load(bytes as unknown as ArrayBuffer);
    expect(excel.worksheets.map((sheet) => sheet.name)).toEqual(['Readme', 'Sessions', 'Efforts', 'Final reads', 'RE']);
    const efforts = excel.getWorksheet('Efforts')!;
    const csvEfforts = parse(fs.readFileSync(built.get('efforts.csv')!.path), { columns: false }) as string[][];
    expect(efforts.rowCount).toBe(csvEfforts.length);
    const header = csvEfforts[0];
    const cell = (row: number, name: string) => efforts.getRow(row + 1).getCell(header.indexOf(name) + 1).value;
    expect(cell(2, 'reader_comment')).toBe('Cough at 0.6 s, "early" end,\nsee trace');
    expect(cell(2, 'fev1_l')).toBe(2.446);
    expect(cell(3, 'fev1_l')).toBeNull();
    expect(cell(3, 'engine_findings')).toBe('hesitation;cough');
    expect(cell(1, 'bev_l')).toBe(0);
    expect(cell(1, 'reader_comment')).toBeNull();
    expect(excel.getWorksheet('Sessions')!.getRow(2).getCell(SESSIONS_TABLE.columns.findIndex((column) => column.name === 'effort_count') + 1).value).toBe(2);
    const re = excel.getWorksheet('RE')!;
    expect(re.rowCount).toBe(1 + 3 * 5);
    // Numbered as in the whole domain: the first subject's second session follows its 2 × 9 + 5 records.
    expect(re.getRow(7).getCell(RE_COLUMNS.findIndex((column) => column.name === 'RESEQ') + 1).value).toBe(2 * 9 + 5 + 9 + 1);
  });
});
