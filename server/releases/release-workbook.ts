/**
 * What the release workbook holds: a Readme sheet, then Sessions, Efforts, Final reads and RE
 * (the derived records), each with the rows of its CSV file, read back from it so that the two
 * always agree. exceljs takes about a microsecond a cell, which makes the workbook the longest
 * single task of a large release; so each sheet is written from its file as the file is being
 * written (its bytes so far, then the next as they come), on another thread when it can be
 * (./release-xlsx-worker.ts), rather than after all the files are complete.
 */
import fs from 'node:fs';
import { setTimeout as sleep } from 'node:timers/promises';
import { RELEASE_FILES, type BuildContext, type TableFiles } from './release-builder.js';
import { readCsvRecords } from './release-csv.js';
import { HashingFileSink } from './release-file-sink.js';
import type { CellValue, ReleaseColumn } from './release-model.js';
import type { StoredDigest } from './release-store.js';
import { EFFORTS_TABLE, READS_TABLE, SESSIONS_TABLE } from './release-tables.js';
import type { WorkbookTable } from './release-xlsx.js';
import { RE_COLUMNS } from './sdtm-re.js';

/** A sheet with the types of its columns, to read its CSV fields back as cells. */
interface TypedSheet extends WorkbookTable {
  readonly columns: readonly Pick<ReleaseColumn<never>, 'name' | 'type'>[];
}

/** How long a reader waits at the end of a file still being written before it looks again. */
const FOLLOW_PAUSE_MS = 10;
const READ_BLOCK_BYTES = 256 * 1024;

/**
 * Files being written elsewhere (another thread, or this one), read as they grow: the writer
 * tells of each file once it is complete, with its size; until then a reader at the end waits.
 * Writes land in order, so what a reader finds is always the start of the file.
 */
export class GrowingFiles {
  private readonly sizes = new Map<string, number>();

  /** The file at `filePath` is complete and holds `sizeBytes` bytes. */
  complete(filePath: string, sizeBytes: number): void {
    this.sizes.set(filePath, sizeBytes);
  }

  /** The file's bytes as they are written, until it is complete. */
  async *read(filePath: string): AsyncGenerator<Buffer> {
    const handle = await this.open(filePath);
    try {
      let position = 0;
      for (;;) {
        const buffer = Buffer.allocUnsafe(READ_BLOCK_BYTES);
        const { bytesRead } = await handle.read(buffer, 0, buffer.length, position);
        if (bytesRead > 0) {
          position += bytesRead;
          yield buffer.subarray(0, bytesRead);
          continue;
        }
        const size = this.sizes.get(filePath);
        if (size !== undefined && position >= size) return;
        await sleep(FOLLOW_PAUSE_MS);
      }
    } finally {
      await handle.close();
    }
  }

  /** Opens the file, waiting for it to be created if need be. */
  private async open(filePath: string): Promise<fs.promises.FileHandle> {
    for (;;) {
      try {
        return await fs.promises.open(filePath, 'r');
      } catch (error) {
        if ((error as NodeJS.ErrnoException).code !== 'ENOENT') throw error;
        await sleep(FOLLOW_PAUSE_MS);
      }
    }
  }
}

/**
 * Writes the workbook to `filePath` from the CSV files as they are written; returns its digest.
 * `rowsWritten` hears of the rows of each block written.
 */
export async function writeWorkbookFile(
  files: TableFiles,
  growing: GrowingFiles,
  context: BuildContext,
  filePath: string,
  rowsWritten: (rows: number) => void,
): Promise<StoredDigest> {
  // exceljs is loaded here, on the thread that writes the workbook, not by the server at start.
  const { ReleaseWorkbook } = await import('./release-xlsx.js');
  const sink = new HashingFileSink(filePath);
  const workbook = new ReleaseWorkbook(sink.asWritable(), new Date(context.dataAsOf));
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
      'Decimals are rounded as in the CSV files; times are ISO 8601, UTC unless an offset is shown; an empty text is an empty cell.',
    ],
  });
  const sheets: { sheet: TypedSheet; file: string }[] = [
    { sheet: { title: SESSIONS_TABLE.title, columns: SESSIONS_TABLE.columns }, file: files.sessions },
    { sheet: { title: EFFORTS_TABLE.title, columns: EFFORTS_TABLE.columns }, file: files.efforts },
    { sheet: { title: READS_TABLE.title, columns: READS_TABLE.columns }, file: files.reads },
    { sheet: { title: 'RE', columns: RE_COLUMNS }, file: files.reDerived },
  ];
  for (const { sheet, file } of sheets) {
    await workbook.writeTable(sheet, cellsOfCsvFile(file, growing.read(file), sheet.columns), rowsWritten);
  }
  await workbook.finish();
  return sink.close();
}

/** The rows of a CSV file of the release (after its header) as cells again; an empty field is no cell. */
async function* cellsOfCsvFile(name: string, bytes: AsyncIterable<Buffer>, columns: TypedSheet['columns']): AsyncGenerator<(CellValue | undefined)[][]> {
  const numeric = columns.map((column) => column.type !== 'text');
  let header = true;
  for await (const records of readCsvRecords({ name, bytes })) {
    if (header) {
      const names = records.shift()!;
      if (names.join(',') !== columns.map((column) => column.name).join(',')) throw new Error(`${name} does not have the columns of its sheet`);
      header = false;
    }
    const rows = records as (CellValue | undefined)[][];
    for (const row of rows) {
      for (let index = 0; index < row.length; index++) {
        const text = row[index] as string;
        row[index] = text === '' ? undefined : numeric[index] ? Number(text) : text;
      }
    }
    yield rows;
  }
}
