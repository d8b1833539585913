/**
 * The one benchmark report: every benchmark module gives rows of this shape, and `npm run bench`
 * prints them as a single markdown table and writes it to test-output/bench-report.md.
 */
import fs from 'node:fs';
import path from 'node:path';

/** One figure of the report, with the baseline measured in the same run. */
export interface BenchRow {
  /** What was measured, and on what (sizes, concurrency). */
  readonly figure: string;
  readonly value: string;
  /** The goal, or '-' for a figure that only explains another. */
  readonly goal: string;
  /** The baseline measured in the same run, with its own value: what the figure is compared with. */
  readonly baseline: string;
  /** The figure divided by its baseline (or '-' when it has none). */
  readonly ratio: string;
}

/** Formats a number with a fixed count of decimals and thousands separators. */
export type NumberFormat = (value: number, digits?: number) => string;

/** The report's number format: en-US grouping, `digits` decimals (none by default). */
export const formatNumber: NumberFormat = (value, digits = 0) =>
  value.toLocaleString('en-US', { maximumFractionDigits: digits, minimumFractionDigits: digits });

/** The percentile `p` (0-100) of ascending `sorted` values: the smallest value with at least p % of the values at or below it. */
export function percentile(sorted: readonly number[], p: number): number {
  if (sorted.length === 0) return Number.NaN;
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1))];
}

const BASELINE_MARK = ' (baseline: ';

/**
 * Reads a row in the older four-column shape (figure, value, goal, "ratio (baseline: what)"):
 * the baseline is the last parenthesis when it starts with "baseline:" and closes the text;
 * otherwise the whole fourth column is kept as the ratio and the baseline is '-'.
 */
export function fromFourColumns(row: readonly string[]): BenchRow {
  const [figure = '', value = '', goal = '', ratioText = '-'] = row;
  const at = ratioText.lastIndexOf(BASELINE_MARK);
  if (at < 0 || !ratioText.endsWith(')')) return { figure, value, goal, baseline: '-', ratio: ratioText };
  return { figure, value, goal, baseline: ratioText.slice(at + BASELINE_MARK.length, -1), ratio: ratioText.slice(0, at) };
}

/** A pipe or a line break inside a cell would break the markdown table. */
function cell(text: string): string {
  return text.replaceAll('|', '\\|').replaceAll('\n', ' ');
}

/** The rows as one markdown table: figure | value | goal | baseline | ratio to baseline. */
export function markdownTable(rows: readonly BenchRow[]): string {
  return [
    '| figure | value | goal | baseline | ratio to baseline |',
    '| --- | --- | --- | --- | --- |',
    ...rows.map((row) => `| ${[row.figure, row.value, row.goal, row.baseline, row.ratio].map(cell).join(' | ')} |`),
  ].join('\n');
}

/** Writes the report where test output goes (git-ignored); returns the file's path. */
export function writeReport(markdown: string, file = path.resolve('test-output', 'bench-report.md')): string {
  fs.mkdirSync(path.dirname(file), { recursive: true });
  fs.writeFileSync(file, markdown);
  return file;
}
