/**
 * The change list of a replay as CSV: one row per changed value, so that a spreadsheet filter
 * on one column answers "which FEV1 verdicts moved". Pure.
 */
import type { ReplayResult } from '../../shared/contracts/protocols.js';

const HEADER = [
  'change',
  'session_id',
  'site',
  'subject',
  'visit',
  'timepoint',
  'bronchodilator',
  'effort_number',
  'effort_label',
  'value',
  'under_current',
  'under_target',
  'note',
];

const VERDICT_WORDS = { acceptable: 'acceptable', usable: 'usable', not_acceptable: 'not acceptable' } as const;

/** The CSV text (RFC 4180, CRLF line ends) of a replay's changes and problems. */
export function replayCsv(result: ReplayResult): string {
  const rows: string[][] = [HEADER];
  const note = `current ${result.current.ref}; target ${result.target.ref}`;
  for (const change of result.effortChanges) {
    const where = [change.sessionId, change.siteNumber, change.subjectCode, change.visitCode, change.timepointCode, change.bronchodilator];
    const effort = [String(change.effortIndex + 1), change.effortLabel];
    for (const [value, step] of [
      ['FEV1', change.fev1],
      ['FVC', change.fvc],
    ] as const) {
      if (step.from === step.to) continue;
      rows.push(['effort verdict', ...where, ...effort, value, VERDICT_WORDS[step.from], VERDICT_WORDS[step.to], note]);
    }
  }
  for (const change of result.sessionChanges) {
    const where = [change.sessionId, change.siteNumber, change.subjectCode, change.visitCode, change.timepointCode, change.bronchodilator];
    const steps = [
      ['session grade', 'FEV1', change.fev1Grade.from, change.fev1Grade.to],
      ['session grade', 'FVC', change.fvcGrade.from, change.fvcGrade.to],
      ['endpoint eligible', 'FEV1', yesNo(change.fev1Endpoint.from), yesNo(change.fev1Endpoint.to)],
      ['endpoint eligible', 'FVC', yesNo(change.fvcEndpoint.from), yesNo(change.fvcEndpoint.to)],
    ] as const;
    for (const [kind, value, from, to] of steps) {
      if (from !== to) rows.push([kind, ...where, '', '', value, from, to, note]);
    }
  }
  for (const problem of result.problems) {
    const where = [problem.sessionId, problem.siteNumber, problem.subjectCode, problem.visitCode, problem.timepointCode, problem.bronchodilator];
    rows.push(['not replayed', ...where, '', '', '', '', '', `${problem.where}: ${problem.message}`]);
  }
  return rows.map((row) => row.map(csvCell).join(',')).join('\r\n') + '\r\n';
}

/** The download name: `replay-<study>-<target>-<date>.csv`. */
export function replayCsvFileName(result: ReplayResult): string {
  const safe = (text: string) => text.replace(/[^A-Za-z0-9.-]+/g, '-');
  return `replay-${safe(result.studyId)}-${safe(result.target.ref)}-${result.ranAt.slice(0, 10)}.csv`;
}

function yesNo(flag: boolean): string {
  return flag ? 'yes' : 'no';
}

/**
 * Quotes when needed; a cell a spreadsheet would run as a formula (leading = + - @) gets a
 * leading apostrophe (OWASP, CSV injection).
 */
export function csvCell(text: string): string {
  const defused = /^[=+\-@\t\r]/.test(text) ? `'${text}` : text;
  return /[",\r\n]/.test(defused) ? `"${defused.replace(/"/g, '""')}"` : defused;
}
