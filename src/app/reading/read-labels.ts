import type { EffortVerdict, QueueItem, ReadKind, ReadWorkspace, SignatureMeaning } from '@shared/contracts/reading';

/** A verdict on an effort's FEV1 or FVC. */
export type Verdict = EffortVerdict['fev1Verdict'];
/** A session grade of FEV1 or FVC. */
export type Grade = ReadWorkspace['result']['fev1Grade'];
/** The two measures a reader judges on each effort. */
export type Measure = 'fev1' | 'fvc';

/** Verdicts in the order they are offered and numbered on the keyboard (1, 2, 3). */
export const VERDICTS: readonly Verdict[] = ['acceptable', 'usable', 'not_acceptable'];

/** A verdict in words, with an icon beside them (never the only carrier of meaning). */
export const VERDICT_LABELS: Readonly<Record<Verdict, { readonly label: string; readonly icon: string }>> = {
  acceptable: { label: 'Acceptable', icon: 'check_circle' },
  usable: { label: 'Usable', icon: 'radio_button_partial' },
  not_acceptable: { label: 'Not acceptable', icon: 'cancel' },
};

export const MEASURE_LABELS: Readonly<Record<Measure, string>> = { fev1: 'FEV1', fvc: 'FVC' };

/**
 * What a session grade says about the efforts, after ATS/ERS 2019 (Graham et al. 2019), Table 10.
 * The numeric tolerances depend on age and the study protocol and are shown beside the grade.
 */
export const GRADE_DESCRIPTIONS: Readonly<Record<Grade, string>> = {
  A: 'three or more acceptable efforts that agree closely',
  B: 'two acceptable efforts that agree closely',
  C: 'two or more acceptable efforts that agree fairly well',
  D: 'two or more acceptable efforts that agree poorly',
  E: 'acceptable efforts that do not agree, or only one acceptable effort',
  U: 'no acceptable effort, but at least one usable',
  F: 'no acceptable or usable effort',
};

/** `Grade B (two acceptable efforts that agree closely)`. */
export function gradeText(grade: Grade): string {
  return `Grade ${grade} (${GRADE_DESCRIPTIONS[grade]})`;
}

export const READ_KIND_LABELS: Readonly<Record<ReadKind, string>> = {
  first: 'First read',
  second: 'Second read',
  adjudication: 'Adjudication',
};

export const READ_STATUS_LABELS: Readonly<Record<ReadWorkspace['status'], string>> = {
  'in-progress': 'In progress',
  withdrawn: 'Released to the queue',
  signed: 'Signed',
};

/** What a signer declares, in words (21 CFR 11.50(a)(3): the meaning of the signature). */
export const SIGNATURE_MEANING_LABELS: Readonly<Record<SignatureMeaning, string>> = {
  authored: 'Authored',
  reviewed: 'Reviewed',
  approved: 'Approved',
  locked: 'Locked',
  unlocked: 'Unlocked',
  released: 'Released',
};

/** What the blinding lets the reader see of where a session sits in the schedule. */
export function blindContextText(item: Pick<QueueItem, 'visitCode' | 'timepointCode' | 'bronchodilator'>): string {
  const parts = [
    item.visitCode ? `Visit ${item.visitCode}` : null,
    item.timepointCode ? `timepoint ${item.timepointCode}` : null,
    item.bronchodilator ? (item.bronchodilator === 'pre' ? 'before bronchodilator' : 'after bronchodilator') : null,
  ].filter((part): part is string => part !== null);
  if (parts.length === 0) return 'Not shown (blinded by the study)';
  const text = parts.join(' · ');
  return text.charAt(0).toUpperCase() + text.slice(1);
}

/** `2025-01-15 08:30 UTC`: times in the reading room are UTC, as signatures are. */
export function utcText(iso: string): string {
  const time = new Date(iso);
  if (Number.isNaN(time.getTime())) return iso;
  return `${time.toISOString().slice(0, 16).replace('T', ' ')} UTC`;
}

/** `2025-01-15 08:30:12 UTC`, for signatures. */
export function utcSecondsText(iso: string): string {
  const time = new Date(iso);
  if (Number.isNaN(time.getTime())) return iso;
  return `${time.toISOString().slice(0, 19).replace('T', ' ')} UTC`;
}

const UNIT_SUFFIXES: readonly [string, string][] = [
  ['LPerS', 'L/s'],
  ['Ml', 'mL'],
  ['Percent', '%'],
  ['Fraction', ''],
  ['Hz', 'Hz'],
  ['L', 'L'],
  ['S', 's'],
];

/**
 * One number behind an engine finding in words: `bevL: 0.16` reads "bev 0.160 L". The unit
 * comes from the name's suffix, as the engine names its values (`volumeL`, `timeS`).
 */
export function findingValueText(name: string, value: number): string {
  const [suffix, unit] = UNIT_SUFFIXES.find(([candidate]) => name.length > candidate.length && name.endsWith(candidate)) ?? ['', ''];
  const words = name
    .slice(0, name.length - suffix.length)
    .replace(/([a-z0-9])([A-Z])/g, '$1 $2')
    .toLowerCase();
  const digits = unit === 'L' || unit === 'L/s' ? 3 : unit === 'mL' || unit === '%' ? 0 : 2;
  return `${words} ${value.toFixed(digits)}${unit ? (unit === '%' ? '%' : ` ${unit}`) : ''}`;
}
