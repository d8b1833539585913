/**
 * What a release is built from: one locked session with its final read, as the repository hands
 * it over, and the column model that the CSV, workbook, transport and define writers share.
 */
import type { Verdict } from '../../shared/spirometry/model.js';

/** The session result of the final read (stored at signing). */
export interface ReleaseReadResult {
  readonly fev1Grade: string;
  readonly fvcGrade: string;
  readonly reportedFev1L: number | null;
  readonly reportedFvcL: number | null;
  readonly fev1FvcRatio: number | null;
  readonly fev1EffortIndex: number | null;
  readonly fvcEffortIndex: number | null;
  readonly endpointEligible: { readonly fev1: boolean; readonly fvc: boolean; readonly reasons: readonly string[] };
}

/** One effort of a released session: the engine's metrics and suggestions beside the final read's verdicts. */
export interface ReleaseEffort {
  readonly id: string;
  readonly effortIndex: number;
  readonly label: string;
  readonly fev1L: number | null;
  readonly fvcL: number | null;
  readonly pefLPerS: number | null;
  readonly fef2575LPerS: number | null;
  readonly fetS: number | null;
  readonly bevL: number | null;
  readonly suggestedFev1Verdict: Verdict;
  readonly suggestedFvcVerdict: Verdict;
  readonly fev1Verdict: Verdict;
  readonly fvcVerdict: Verdict;
  /** Finding codes of the engine. */
  readonly engineFindings: readonly string[];
  /** Finding codes the reader confirmed or added. */
  readonly readerFindings: readonly string[];
  readonly readerComment: string;
}

/** One locked session with everything the release files say about it. */
export interface ReleaseSession {
  readonly id: string;
  readonly studyCode: string;
  readonly siteNumber: string;
  readonly subjectCode: string;
  readonly visitCode: string;
  readonly visitName: string;
  readonly visitNumber: number;
  readonly timepointCode: string;
  readonly timepointName: string;
  readonly timepointNumber: number;
  readonly bronchodilator: 'pre' | 'post';
  /** ISO 8601 UTC. */
  readonly testedAt: string;
  /** IANA zone of the site where the test was done. */
  readonly timeZone: string;
  readonly ageYears: number;
  readonly heightCm: number;
  readonly weightKg: number | null;
  readonly sex: string;
  readonly technicianCode: string;
  readonly deviceManufacturer: string | null;
  readonly deviceModel: string | null;
  readonly deviceSerialNumber: string | null;
  readonly lock: { readonly scope: string; readonly lockedAt: string };
  /** Efforts of the checked file (also when a pass reads the session without its efforts). */
  readonly effortCount: number;
  readonly read: {
    readonly id: string;
    readonly kind: string;
    readonly signerName: string;
    readonly signedAt: string;
    readonly result: ReleaseReadResult;
  };
  readonly efforts: readonly ReleaseEffort[];
}

/** A value in one cell of a release table; null is empty (missing). */
export type CellValue = string | number | null;

/** One column of a release table, as every writer and the define document describe it. */
export interface ReleaseColumn<Row> {
  /** CSV header and workbook heading; for SDTM tables, the SAS variable name. */
  readonly name: string;
  readonly label: string;
  readonly type: 'text' | 'integer' | 'decimal';
  /** Decimals written for a decimal column; undefined when the values are rounded already (per record). */
  readonly digits?: number;
  readonly description: string;
  /** Name of the codelist the values come from, if any (see the define document). */
  readonly codelist?: string;
  readonly value: (row: Row) => CellValue;
}

/** A table of a release: one CSV file and one workbook sheet. */
export interface ReleaseTable<Row> {
  /** File name without extension. */
  readonly name: string;
  readonly title: string;
  /** What one row is. */
  readonly rowIs: string;
  readonly columns: readonly ReleaseColumn<Row>[];
  /** The rows of one session, in release order. */
  readonly rowsOf: (session: ReleaseSession) => readonly Row[];
}

const formatters = new Map<string, Intl.DateTimeFormat>();
const offsets = new Map<string, number>();
/** UTC offsets are whole multiples of 15 minutes and change on such boundaries, so one lookup serves each quarter hour. */
const QUARTER_HOUR_MS = 15 * 60_000;

/** The zone's UTC offset (minutes) at an instant, from the platform's time-zone data. */
function offsetMinutes(instantMs: number, timeZone: string): number {
  const bucket = Math.floor(instantMs / QUARTER_HOUR_MS);
  const key = `${timeZone}|${bucket}`;
  let offset = offsets.get(key);
  if (offset === undefined) {
    let formatter = formatters.get(timeZone);
    if (!formatter) {
      formatter = new Intl.DateTimeFormat('en-US', {
        timeZone,
        hourCycle: 'h23',
        year: 'numeric',
        month: '2-digit',
        day: '2-digit',
        hour: '2-digit',
        minute: '2-digit',
      });
      formatters.set(timeZone, formatter);
    }
    const at = bucket * QUARTER_HOUR_MS;
    const parts = Object.fromEntries(formatter.formatToParts(at).map((part) => [part.type, part.value]));
    const localMs = Date.UTC(Number(parts['year']), Number(parts['month']) - 1, Number(parts['day']), Number(parts['hour']), Number(parts['minute']));
    offset = Math.round((localMs - at) / 60_000);
    if (offsets.size > 100_000) offsets.clear();
    offsets.set(key, offset);
  }
  return offset;
}

/**
 * A UTC instant as local time at the IANA zone, in ISO 8601 with the offset in force then,
 * to the second: `2026-11-20T09:30:00+01:00`.
 */
export function localIsoWithOffset(utcIso: string, timeZone: string): string {
  const instantMs = Math.floor(Date.parse(utcIso) / 1000) * 1000;
  const offset = offsetMinutes(instantMs, timeZone);
  const local = new Date(instantMs + offset * 60_000).toISOString().slice(0, 19);
  const two = (n: number) => String(n).padStart(2, '0');
  return `${local}${offset < 0 ? '-' : '+'}${two(Math.floor(Math.abs(offset) / 60))}:${two(Math.abs(offset) % 60)}`;
}

/** `value` rounded to `digits` decimals (half away from zero on the decimal text), or null. */
export function roundTo(value: number | null | undefined, digits: number): number | null {
  if (value === null || value === undefined || !Number.isFinite(value)) return null;
  const rounded = Number(value.toFixed(digits));
  return Object.is(rounded, -0) ? 0 : rounded;
}
