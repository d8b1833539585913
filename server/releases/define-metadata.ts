/**
 * A define-style description of a release (after the idea of CDISC Define-XML, kept as JSON and
 * an HTML page rather than the XML schema): datasets and tables, every variable with its label,
 * type, length, role, origin and codelist, and the codelists with where each term comes from.
 * Pure; deterministic for the same data (no release id, no clock), like the CSV and XPT files.
 */
import type { ReleaseColumn } from './release-model.js';
import { ACCEPTABILITY_RESULTS, RE_COLUMNS, RE_EVALUATOR, RE_METHOD, RE_TESTS, type ReRow } from './sdtm-re.js';

/** One variable of the RE dataset. */
export interface DefineVariable {
  readonly name: string;
  readonly label: string;
  readonly type: 'Char' | 'Num';
  readonly length: number;
  readonly role: string;
  readonly origin: string;
  readonly codelist: string | null;
  readonly description: string;
}

/** One column of a plain table. */
export interface DefineColumn {
  readonly name: string;
  readonly type: 'text' | 'integer' | 'decimal';
  readonly digits: number | null;
  readonly codelist: string | null;
  readonly description: string;
}

export interface DefineCodelistItem {
  readonly code: string;
  readonly decode: string;
  readonly source: string;
}

export interface DefineCodelist {
  readonly id: string;
  readonly name: string;
  readonly extensible: boolean;
  readonly items: readonly DefineCodelistItem[];
}

/** The define document of a release. */
export interface DefineDocument {
  readonly format: 'tidemark-define/1';
  readonly study: { readonly code: string; readonly title: string; readonly sponsor: string };
  /** Latest change in the released data (ISO 8601 UTC); the transport files carry it as their date. */
  readonly dataAsOf: string;
  readonly standards: readonly string[];
  readonly datasets: readonly {
    readonly name: 'RE';
    readonly label: string;
    readonly class: string;
    readonly structure: string;
    readonly keys: readonly string[];
    readonly files: readonly string[];
    readonly records: number;
    readonly variables: readonly DefineVariable[];
  }[];
  readonly tables: readonly {
    readonly name: string;
    readonly title: string;
    readonly file: string;
    readonly rowIs: string;
    readonly rows: number;
    readonly columns: readonly DefineColumn[];
  }[];
  readonly codelists: readonly DefineCodelist[];
}

/** What the define document needs beside the fixed metadata. */
export interface DefineInput {
  readonly study: DefineDocument['study'];
  readonly dataAsOf: string;
  /** Lengths of the RE character variables in the transport file. */
  readonly reLengths: ReadonlyMap<string, number>;
  readonly reRecords: number;
  readonly tables: readonly { readonly table: DescribedTable; readonly rows: number }[];
}

/** What the define document reads of a plain table. */
export interface DescribedTable {
  readonly name: string;
  readonly title: string;
  readonly rowIs: string;
  readonly columns: readonly Pick<ReleaseColumn<never>, 'name' | 'type' | 'digits' | 'codelist' | 'description'>[];
}

/** SDTM roles of the RE variables (SDTMIG v3.3, recalled from memory). */
const RE_ROLES: Record<string, string> = {
  STUDYID: 'Identifier',
  DOMAIN: 'Identifier',
  USUBJID: 'Identifier',
  RESEQ: 'Identifier',
  REGRPID: 'Identifier',
  RETESTCD: 'Topic',
  RETEST: 'Synonym Qualifier',
  REORRES: 'Result Qualifier',
  REORRESU: 'Variable Qualifier',
  RESTRESC: 'Result Qualifier',
  RESTRESN: 'Result Qualifier',
  RESTRESU: 'Variable Qualifier',
  RESTAT: 'Record Qualifier',
  REREASND: 'Record Qualifier',
  REMETHOD: 'Record Qualifier',
  REDRVFL: 'Record Qualifier',
  REEVAL: 'Record Qualifier',
  REREPNUM: 'Record Qualifier',
  VISITNUM: 'Timing',
  VISIT: 'Timing',
  REDTC: 'Timing',
  RETPT: 'Timing',
  RETPTNUM: 'Timing',
};

const RE_ORIGINS: Record<string, string> = {
  REORRES: 'Derived (engine metrics of the recorded curve; verdicts and grades of the final over-read)',
  RESTRESC: 'Derived (from REORRES)',
  RESTRESN: 'Derived (from REORRES)',
  RESEQ: 'Derived',
  REDRVFL: 'Assigned',
  REDTC: 'Collected (session registration at the site)',
  VISIT: 'Protocol',
  VISITNUM: 'Protocol',
  RETPT: 'Protocol',
  RETPTNUM: 'Protocol',
};

const CT_FROM_MEMORY = 'CDISC Controlled Terminology (recalled from memory; check against the pinned CT package)';

/** The codelists the RE dataset and the plain tables refer to. */
export function releaseCodelists(): DefineCodelist[] {
  const tests = Object.values(RE_TESTS);
  return [
    { id: 'RETESTCD', name: 'Respiratory Test Code', extensible: true, items: tests.map((test) => ({ code: test.code, decode: test.name, source: test.source })) },
    { id: 'RETEST', name: 'Respiratory Test Name', extensible: true, items: tests.map((test) => ({ code: test.name, decode: test.code, source: test.source })) },
    {
      id: 'UNIT',
      name: 'Unit',
      extensible: true,
      items: [
        { code: 'L', decode: 'Liter', source: CT_FROM_MEMORY },
        { code: 'L/s', decode: 'Liter per Second', source: CT_FROM_MEMORY },
        { code: 's', decode: 'Second', source: CT_FROM_MEMORY },
      ],
    },
    { id: 'ND', name: 'Not Done', extensible: false, items: [{ code: 'NOT DONE', decode: 'Not Done', source: CT_FROM_MEMORY }] },
    { id: 'NY', name: 'No Yes Response (subset)', extensible: false, items: [{ code: 'Y', decode: 'Yes', source: CT_FROM_MEMORY }] },
    { id: 'METHOD', name: 'Method', extensible: true, items: [{ code: RE_METHOD, decode: 'Spirometry', source: CT_FROM_MEMORY }] },
    { id: 'EVAL', name: 'Evaluator', extensible: true, items: [{ code: RE_EVALUATOR, decode: 'Blinded central over-reader', source: CT_FROM_MEMORY }] },
    {
      id: 'ACPT',
      name: 'Acceptability of an effort (results of FEV1ACPT, FVCACPT)',
      extensible: false,
      items: Object.values(ACCEPTABILITY_RESULTS).map((code) => ({ code, decode: code.toLowerCase(), source: 'ATS/ERS 2019 (Graham et al. 2019)' })),
    },
    {
      id: 'grade',
      name: 'Session quality grade (results of FEV1GRD, FVCGRD; grade columns)',
      extensible: false,
      items: ['A', 'B', 'C', 'D', 'E', 'F', 'U'].map((code) => ({ code, decode: `Grade ${code}`, source: 'ATS/ERS 2019 (Graham et al. 2019), grading of repeatability' })),
    },
    {
      id: 'verdict',
      name: 'Effort verdict (verdict columns of the efforts table)',
      extensible: false,
      items: [
        { code: 'acceptable', decode: 'Acceptable', source: 'ATS/ERS 2019 (Graham et al. 2019)' },
        { code: 'usable', decode: 'Usable', source: 'ATS/ERS 2019 (Graham et al. 2019)' },
        { code: 'not_acceptable', decode: 'Not acceptable', source: 'ATS/ERS 2019 (Graham et al. 2019)' },
      ],
    },
  ];
}

/** Builds the define document. */
export function buildDefineDocument(input: DefineInput): DefineDocument {
  return {
    format: 'tidemark-define/1',
    study: input.study,
    dataAsOf: input.dataAsOf,
    standards: ['CDISC SDTMIG v3.3 (RE domain)', 'SAS transport version 5 (SAS technical note TS-140)', 'CSV: RFC 4180, UTF-8'],
    datasets: [
      {
        name: 'RE',
        label: 'Respiratory System Findings',
        class: 'Findings',
        structure: 'One record per test per effort per session, plus the derived reported values and grades of each session',
        keys: ['STUDYID', 'USUBJID', 'VISITNUM', 'RETPTNUM', 'REGRPID', 'RETESTCD'],
        files: ['re.xpt', 're.csv'],
        records: input.reRecords,
        variables: RE_COLUMNS.map((column) => defineVariable(column, input.reLengths)),
      },
    ],
    tables: input.tables.map(({ table, rows }) => ({
      name: table.name,
      title: table.title,
      file: `${table.name}.csv`,
      rowIs: table.rowIs,
      rows,
      columns: table.columns.map((column) => ({
        name: column.name,
        type: column.type,
        digits: column.digits ?? null,
        codelist: column.codelist ?? null,
        description: column.description,
      })),
    })),
    codelists: releaseCodelists(),
  };
}

function defineVariable(column: ReleaseColumn<ReRow>, lengths: ReadonlyMap<string, number>): DefineVariable {
  const numeric = column.type !== 'text';
  return {
    name: column.name,
    label: column.label,
    type: numeric ? 'Num' : 'Char',
    length: numeric ? 8 : (lengths.get(column.name) ?? 1),
    role: RE_ROLES[column.name] ?? 'Record Qualifier',
    origin: RE_ORIGINS[column.name] ?? 'Assigned',
    codelist: column.codelist ?? null,
    description: column.description,
  };
}

const escapeHtml = (text: string | number | null): string =>
  String(text ?? '').replace(/[&<>"']/g, (character) => `&#${character.charCodeAt(0)};`);

function htmlTable(headings: readonly string[], rows: readonly (readonly (string | number | null)[])[]): string {
  const head = headings.map((heading) => `<th scope="col">${escapeHtml(heading)}</th>`).join('');
  const body = rows.map((row) => `<tr>${row.map((cell) => `<td>${escapeHtml(cell)}</td>`).join('')}</tr>`).join('\n');
  return `<table>\n<thead><tr>${head}</tr></thead>\n<tbody>\n${body}\n</tbody>\n</table>`;
}

/** The define document as a self-contained HTML page. */
export function renderDefineHtml(define: DefineDocument): string {
  const sections: string[] = [];
  for (const dataset of define.datasets) {
    sections.push(
      `<h2 id="${escapeHtml(dataset.name)}">${escapeHtml(dataset.name)}: ${escapeHtml(dataset.label)}</h2>`,
      `<p>Class ${escapeHtml(dataset.class)}. ${escapeHtml(dataset.structure)}. Keys: ${escapeHtml(dataset.keys.join(', '))}. ` +
        `Files: ${escapeHtml(dataset.files.join(', '))}. Records: ${escapeHtml(dataset.records)}.</p>`,
      htmlTable(
        ['Variable', 'Label', 'Type', 'Length', 'Role', 'Origin', 'Codelist', 'Description'],
        dataset.variables.map((v) => [v.name, v.label, v.type, v.length, v.role, v.origin, v.codelist, v.description]),
      ),
    );
  }
  for (const table of define.tables) {
    sections.push(
      `<h2 id="${escapeHtml(table.name)}">${escapeHtml(table.title)} (${escapeHtml(table.file)})</h2>`,
      `<p>One row: ${escapeHtml(table.rowIs)}. Rows: ${escapeHtml(table.rows)}.</p>`,
      htmlTable(
        ['Column', 'Type', 'Decimals', 'Codelist', 'Description'],
        table.columns.map((c) => [c.name, c.type, c.digits, c.codelist, c.description]),
      ),
    );
  }
  sections.push('<h2 id="codelists">Codelists</h2>');
  for (const codelist of define.codelists) {
    sections.push(
      `<h3 id="codelist-${escapeHtml(codelist.id)}">${escapeHtml(codelist.id)}: ${escapeHtml(codelist.name)}${codelist.extensible ? ' (extensible)' : ''}</h3>`,
      htmlTable(['Term', 'Decode', 'Source'], codelist.items.map((item) => [item.code, item.decode, item.source])),
    );
  }
  const title = `Define: ${define.study.code} release data`;
  return [
    '<!doctype html>',
    '<html lang="en">',
    '<head>',
    '<meta charset="utf-8">',
    `<title>${escapeHtml(title)}</title>`,
    '<style>body{font-family:sans-serif;margin:2rem;color:#1b1b1f}table{border-collapse:collapse;margin-bottom:1.5rem}' +
      'th,td{border:1px solid #c4c6d0;padding:.25rem .5rem;text-align:left;vertical-align:top}th{background:#eef0f8}</style>',
    '</head>',
    '<body>',
    `<h1>${escapeHtml(title)}</h1>`,
    `<p>${escapeHtml(define.study.title)} (${escapeHtml(define.study.sponsor)}). Data as of ${escapeHtml(define.dataAsOf)}. ` +
      `Standards: ${escapeHtml(define.standards.join('; '))}.</p>`,
    ...sections,
    '</body>',
    '</html>',
    '',
  ].join('\n');
}
