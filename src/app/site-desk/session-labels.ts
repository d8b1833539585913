import type {
  EffortSummary,
  RegisterSession,
  SessionCheck,
  SessionStatus,
  TestDemographics,
  Upload,
} from '@shared/contracts/sessions';

/** How a session status is told to a site coordinator: words first, an icon beside them. */
export interface StatusLabel {
  readonly label: string;
  /** Material Symbols ligature; never the only carrier of meaning. */
  readonly icon: string;
  /** One sentence on what the status means and what to do next. */
  readonly description: string;
}

/** Words and icons for each session status. */
export const SESSION_STATUS_LABELS: Readonly<Record<SessionStatus, StatusLabel>> = {
  'awaiting-file': {
    label: 'Awaiting file',
    icon: 'hourglass_empty',
    description: 'Registered; upload the session file from the spirometer.',
  },
  checked: {
    label: 'Checked',
    icon: 'task_alt',
    description: 'The file was read and the automated checks are done; the over-read comes next.',
  },
  rejected: {
    label: 'Rejected',
    icon: 'report',
    description: 'The last file could not be used. It is kept; see the reasons and upload a corrected file.',
  },
  'in-reading': {
    label: 'Being over-read',
    icon: 'visibility',
    description: 'A central over-reader is judging the efforts; feedback follows when the read is final.',
  },
  adjudication: {
    label: 'In adjudication',
    icon: 'balance',
    description: 'Two independent reads differ; an adjudicator is deciding. Feedback follows.',
  },
  final: {
    label: 'Over-read final',
    icon: 'verified',
    description: 'The over-read is signed; its feedback for the site is below.',
  },
};

/** The label of a status, for templates. */
export function sessionStatusLabel(status: SessionStatus): StatusLabel {
  return SESSION_STATUS_LABELS[status];
}

/** The engine's suggested verdict on an effort. */
export type Verdict = EffortSummary['suggestedFev1Verdict'];

/** The engine's suggested verdict on an effort, in words, with an icon beside them. */
export const VERDICT_LABELS: Readonly<Record<Verdict, { readonly label: string; readonly icon: string }>> = {
  acceptable: { label: 'Acceptable', icon: 'check_circle' },
  usable: { label: 'Usable', icon: 'radio_button_partial' },
  not_acceptable: { label: 'Not acceptable', icon: 'cancel' },
};

/** A session grade of FEV1 or FVC. */
export type Grade = SessionCheck['fev1Grade'];

/**
 * What a session grade says about the efforts, after ATS/ERS 2019 (Graham et al. 2019), Table 10.
 * The numeric tolerances depend on age and the study protocol, so they are left out here.
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

/** `Grade A (three or more acceptable efforts that agree closely)`; a dash when not graded yet. */
export function gradeText(grade: Grade | null | undefined): string {
  return grade ? `Grade ${grade} (${GRADE_DESCRIPTIONS[grade]})` : 'Not graded yet';
}

/** Before or after the bronchodilator, in words. */
export const BRONCHODILATOR_LABELS: Readonly<Record<RegisterSession['bronchodilator'], string>> = {
  pre: 'Before bronchodilator',
  post: 'After bronchodilator',
};

/** A file format Tidemark recognised. */
export type UploadFormat = NonNullable<Upload['detectedFormat']>;

/** The file formats Tidemark reads, in words. */
export const UPLOAD_FORMAT_LABELS: Readonly<Record<UploadFormat, string>> = {
  'effort-csv': 'One effort (CSV)',
  'effort-zip': 'Several efforts (ZIP of CSV files)',
  'tidemark-session-json': 'Session file (JSON)',
  'fhir-bundle': 'FHIR bundle (JSON)',
};

/** The format of an upload in words; files that were not recognised say so. */
export function uploadFormatText(format: UploadFormat | null): string {
  return format ? UPLOAD_FORMAT_LABELS[format] : 'Not recognised';
}

/** An ethnic group of the reference equations. */
export type Ethnicity = NonNullable<TestDemographics['ethnicity']>;

/** The ethnic groups of the reference equations, as people read them. */
export const ETHNICITY_LABELS: Readonly<Record<Ethnicity, string>> = {
  caucasian: 'Caucasian',
  'african-american': 'African American',
  'north-east-asian': 'North-East Asian',
  'south-east-asian': 'South-East Asian',
  'mexican-american': 'Mexican American',
  other: 'Other or mixed',
};

/** `2.4 MB`, `812 kB`, `95 bytes`: a file size as people read it (decimal units). */
export function fileSizeText(sizeBytes: number): string {
  if (sizeBytes < 1000) return `${sizeBytes} bytes`;
  if (sizeBytes < 1_000_000) return `${(sizeBytes / 1000).toFixed(sizeBytes < 10_000 ? 1 : 0)} kB`;
  return `${(sizeBytes / 1_000_000).toFixed(1)} MB`;
}
