/**
 * The release workbook, written with exceljs's streaming WorkbookWriter: a Readme sheet first
 * (study, release, data cut, signer, caution, file list), then one sheet per table, one sheet at
 * a time. Rows come as cells already rounded (read back from the CSV files) and are committed as
 * they come, and the writer waits for the zip stream to catch up so that memory stays flat
 * however many rows there are.
 */
import type { Writable } from 'node:stream';
import ExcelJS from 'exceljs';
import type { CellValue, ReleaseColumn } from './release-model.js';

/** Rows Excel holds in one sheet, header included. */
export const EXCEL_MAX_ROWS = 1_048_576;
/** Excel's limit on a sheet name. */
const SHEET_NAME_MAX = 31;
/** How far the zip stream may fall behind before rows wait (bytes of sheet XML). */
const ZIP_BACKLOG_BYTES = 1 << 20;
/** Rows between two looks at the zip backlog. */
const ROWS_PER_BACKLOG_CHECK = 256;

/** What the Readme sheet says. */
export interface WorkbookReadme {
  readonly studyCode: string;
  readonly studyTitle: string;
  readonly sponsor: string;
  readonly releaseId: string;
  readonly dataCutAt: string;
  readonly dataAsOf: string;
  readonly signer: { readonly printedName: string; readonly meaning: string; readonly signedAt: string };
  readonly caution: string;
  /** The files of the release, with what each holds. */
  readonly files: readonly { readonly name: string; readonly holds: string }[];
  /** Further notes, one line each. */
  readonly notes: readonly string[];
}

type SheetWriter = ExcelJS.Worksheet;

/** A table of the workbook: its sheet title and columns. */
export interface WorkbookTable {
  readonly title: string;
  readonly columns: readonly Pick<ReleaseColumn<never>, 'name'>[];
}

/** Writes the workbook to `output` (the caller hashes and stores it), one sheet after the other. */
export class ReleaseWorkbook {
  private readonly workbook: ExcelJS.stream.xlsx.WorkbookWriter;

  constructor(output: Writable, createdAt: Date) {
    // Without styles and shared strings: each costs time on every cell of a large sheet.
    this.workbook = new ExcelJS.stream.xlsx.WorkbookWriter({ stream: output, useStyles: false, useSharedStrings: false });
    this.workbook.creator = 'Tidemark';
    this.workbook.created = createdAt;
    this.workbook.modified = createdAt;
  }

  /** The Readme sheet; write it first so that it opens first. */
  writeReadme(readme: WorkbookReadme): void {
    const sheet = this.workbook.addWorksheet('Readme');
    sheet.columns = [{ width: 28 }, { width: 100 }];
    const line = (label: string, value: string) => sheet.addRow([label, value]).commit();
    line('Study', `${readme.studyCode}: ${readme.studyTitle}`);
    line('Sponsor', readme.sponsor);
    line('Release', readme.releaseId);
    line('Data cut', readme.dataCutAt);
    line('Data as of', readme.dataAsOf);
    line('Released by', `${readme.signer.printedName}, ${readme.signer.signedAt} (meaning: ${readme.signer.meaning})`);
    line('Caution', readme.caution);
    line('', '');
    line('Files', 'The manifest (manifest.json) lists each file with its size and SHA-256.');
    for (const file of readme.files) line(file.name, file.holds);
    line('', '');
    for (const note of readme.notes) line('Note', note);
    sheet.commit();
  }

  /**
   * One table as one sheet (continued on "Title (2)" … past Excel's row limit): a header row of
   * column names, then the rows as they come, in blocks; `rowsWritten` hears of each block. An
   * undefined cell is left out (an empty cell costs nothing then; null would make one).
   */
  async writeTable(
    table: WorkbookTable,
    blocks: AsyncIterable<readonly (readonly (CellValue | undefined)[])[]>,
    rowsWritten: (rows: number) => void = () => undefined,
  ): Promise<number> {
    const { title, columns } = table;
    let part = 1;
    let sheet = this.openSheet(title, part, columns);
    let rowsInSheet = 1;
    let written = 0;
    for await (const rows of blocks) {
      for (const row of rows) {
        if (rowsInSheet === EXCEL_MAX_ROWS) {
          sheet.commit();
          sheet = this.openSheet(title, ++part, columns);
          rowsInSheet = 1;
        }
        sheet.addRow(row as (CellValue | undefined)[]).commit();
        rowsInSheet++;
        if (++written % ROWS_PER_BACKLOG_CHECK === 0) await zipCaughtUp(sheet);
      }
      rowsWritten(rows.length);
    }
    sheet.commit();
    return written;
  }

  /** Finishes the zip; resolves when everything is written to the output. */
  async finish(): Promise<void> {
    await this.workbook.commit();
  }

  /** The sheet of a part of a table, with its header row written. */
  private openSheet(title: string, part: number, columns: WorkbookTable['columns']): SheetWriter {
    const suffix = part === 1 ? '' : ` (${part})`;
    const name = `${title.replace(/[[\]:*?/\\]/g, ' ').slice(0, SHEET_NAME_MAX - suffix.length)}${suffix}`;
    const sheet = this.workbook.addWorksheet(name, { views: [{ state: 'frozen', ySplit: 1 }] });
    sheet.columns = columns.map((column) => ({ width: Math.min(40, Math.max(10, column.name.length + 2)) }));
    sheet.addRow(columns.map((column) => column.name)).commit();
    return sheet;
  }
}

/**
 * Waits while the sheet's XML waits for the zip compressor. exceljs's sheet stream has no
 * back-pressure of its own: without this, a sheet of a million rows piles up in memory. The
 * backlog is read from the stream the zip archiver pulls from; if exceljs ever changes that
 * inner shape, this falls back to giving the event loop a turn.
 */
async function zipCaughtUp(sheet: SheetWriter): Promise<void> {
  type Pending = { _writableState?: { length: number }; _readableState?: { length: number } };
  const consumer = (sheet as unknown as { stream?: { pipes?: Pending[] } }).stream?.pipes?.[0];
  const backlog = () => (consumer?._writableState?.length ?? 0) + (consumer?._readableState?.length ?? 0);
  if (!consumer?._writableState) {
    await new Promise<void>((resolve) => setImmediate(resolve));
    return;
  }
  while (backlog() > ZIP_BACKLOG_BYTES) await new Promise<void>((resolve) => setTimeout(resolve, 1));
}
