import type { Role } from '../../shared/contracts/auth.js';

/**
 * The demo scenario: an invented sponsor, compound, trial, sites, people and subjects.
 * Any likeness to real organisations, persons or devices is unintended.
 */
export const DEMO_PASSWORD = 'tidemark-demo';

export const DEMO_STUDY = {
  id: 'study-hlx-201',
  code: 'HLX-201',
  title: 'Phase II, randomised, placebo-controlled trial of inhaled halvoterol in moderate COPD',
  sponsor: 'Gullwing Therapeutics (fictional)',
  indication: 'Moderate chronic obstructive pulmonary disease',
  protocolRuleSetId: 'ats-ers-2019',
} as const;

export const DEMO_SITES = [
  { id: 'site-101', number: '101', name: 'Fjellvik Lung Clinic', countryCode: 'NO', timeZone: 'Europe/Oslo' },
  { id: 'site-102', number: '102', name: 'Clínica Respiratoria Alcorán', countryCode: 'ES', timeZone: 'Europe/Madrid' },
  { id: 'site-201', number: '201', name: 'Lakeshore Chest Research', countryCode: 'CA', timeZone: 'America/Toronto' },
  { id: 'site-301', number: '301', name: 'Kestrel Valley Pulmonary Unit', countryCode: 'ZA', timeZone: 'Africa/Johannesburg' },
] as const;

export type DemoSiteId = (typeof DEMO_SITES)[number]['id'];

export interface DemoUser {
  readonly id: string;
  readonly email: string;
  readonly name: string;
  readonly roles: readonly { role: Role; siteIds?: readonly string[] }[];
}

export const DEMO_USERS: readonly DemoUser[] = [
  { id: 'user-admin', email: 'admin@tidemark.example', name: 'Odile Marchetti', roles: [{ role: 'study-admin' }] },
  {
    id: 'user-coordinator-101',
    email: 'coordinator.101@tidemark.example',
    name: 'Tove Brennsund',
    roles: [{ role: 'site-coordinator', siteIds: ['site-101'] }],
  },
  {
    id: 'user-coordinator-102',
    email: 'coordinator.102@tidemark.example',
    name: 'Inés Carrasquilla',
    roles: [{ role: 'site-coordinator', siteIds: ['site-102'] }],
  },
  {
    id: 'user-coordinator-201',
    email: 'coordinator.201@tidemark.example',
    name: 'Marcus Okonkwo-Hale',
    roles: [{ role: 'site-coordinator', siteIds: ['site-201', 'site-301'] }],
  },
  { id: 'user-reader-1', email: 'reader.one@tidemark.example', name: 'Dr Ilse Vandermeer', roles: [{ role: 'over-reader' }] },
  { id: 'user-reader-2', email: 'reader.two@tidemark.example', name: 'Dr Rafael Quintero', roles: [{ role: 'over-reader' }] },
  {
    id: 'user-adjudicator',
    email: 'adjudicator@tidemark.example',
    name: 'Dr Amara Lindqvist',
    roles: [{ role: 'over-reader' }, { role: 'adjudicator' }],
  },
  { id: 'user-data-manager', email: 'data.manager@tidemark.example', name: 'Priya Halloran', roles: [{ role: 'data-manager' }] },
  { id: 'user-monitor', email: 'monitor@tidemark.example', name: 'Jonas Feldkirch', roles: [{ role: 'monitor' }] },
];

/**
 * The HLX-201 visit schedule. Day 1 is randomisation (first dose); screening, with its
 * reversibility test, falls two weeks before it. Windows are days either side of the planned day.
 */
export const DEMO_VISITS = [
  { code: 'SCR', name: 'Screening', dayOffset: -14, windowBeforeDays: 7, windowAfterDays: 7 },
  { code: 'V2', name: 'Randomisation (day 1)', dayOffset: 1, windowBeforeDays: 0, windowAfterDays: 0 },
  { code: 'V3', name: 'Week 4', dayOffset: 29, windowBeforeDays: 3, windowAfterDays: 3 },
  { code: 'V4', name: 'Week 12', dayOffset: 85, windowBeforeDays: 5, windowAfterDays: 5 },
  { code: 'V5', name: 'Week 24 (end of treatment)', dayOffset: 169, windowBeforeDays: 7, windowAfterDays: 7 },
] as const;

export type DemoVisitCode = (typeof DEMO_VISITS)[number]['code'];

export const DEMO_TIMEPOINTS = [
  { code: 'PRE-DOSE', name: 'Pre-dose (trough)' },
  { code: 'POST-BD', name: 'Post-bronchodilator (screening reversibility)' },
  { code: '2H-POST-DOSE', name: '2 h post-dose' },
] as const;

export type DemoTimepointCode = (typeof DEMO_TIMEPOINTS)[number]['code'];

/**
 * Sessions tested at each visit. Post-dose sessions follow the study drug, not a reversibility
 * bronchodilator, so they are registered as pre-bronchodilator sets.
 */
export const DEMO_SESSIONS_PER_VISIT: Readonly<
  Record<DemoVisitCode, readonly { timepointCode: DemoTimepointCode; bronchodilator: 'pre' | 'post' }[]>
> = {
  SCR: [
    { timepointCode: 'PRE-DOSE', bronchodilator: 'pre' },
    { timepointCode: 'POST-BD', bronchodilator: 'post' },
  ],
  V2: [{ timepointCode: 'PRE-DOSE', bronchodilator: 'pre' }],
  V3: [
    { timepointCode: 'PRE-DOSE', bronchodilator: 'pre' },
    { timepointCode: '2H-POST-DOSE', bronchodilator: 'pre' },
  ],
  V4: [{ timepointCode: 'PRE-DOSE', bronchodilator: 'pre' }],
  V5: [{ timepointCode: 'PRE-DOSE', bronchodilator: 'pre' }],
};

/** One trial subject: a pseudonymous code and invented demographics at screening. */
export interface DemoSubject {
  readonly code: string;
  readonly siteId: DemoSiteId;
  readonly sex: 'female' | 'male';
  readonly ageYears: number;
  readonly heightCm: number;
  readonly weightKg: number;
  /** Screening pre-bronchodilator FEV1 as percent of the ECSC 1993 prediction: moderate COPD is 50-79 % (GOLD 2). */
  readonly fev1PercentPredicted: number;
  /** Change of trough FEV1 after randomisation (L): the invented treatment effect, blinded in the app. */
  readonly troughChangeL: number;
  /** Days from randomisation to today; negative while the subject is still in screening. */
  readonly randomisedDaysAgo: number;
}

/**
 * Ethnicity is left out: the study's ECSC 1993 equations have no ethnic terms, and a trial
 * records it only where its equations need it.
 */
export const DEMO_SUBJECTS: readonly DemoSubject[] = [
  { code: '101-001', siteId: 'site-101', sex: 'male', ageYears: 67, heightCm: 178, weightKg: 82, fev1PercentPredicted: 62, troughChangeL: 0.13, randomisedDaysAgo: 80 },
  { code: '101-002', siteId: 'site-101', sex: 'female', ageYears: 59, heightCm: 165, weightKg: 68, fev1PercentPredicted: 71, troughChangeL: 0.02, randomisedDaysAgo: 62 },
  { code: '101-003', siteId: 'site-101', sex: 'male', ageYears: 72, heightCm: 174, weightKg: 77, fev1PercentPredicted: 55, troughChangeL: 0.11, randomisedDaysAgo: 24 },
  { code: '101-004', siteId: 'site-101', sex: 'female', ageYears: 63, heightCm: 160, weightKg: 59, fev1PercentPredicted: 66, troughChangeL: -0.01, randomisedDaysAgo: 12 },
  { code: '101-005', siteId: 'site-101', sex: 'male', ageYears: 54, heightCm: 182, weightKg: 95, fev1PercentPredicted: 74, troughChangeL: 0.1, randomisedDaysAgo: -5 },
  { code: '102-001', siteId: 'site-102', sex: 'male', ageYears: 70, heightCm: 168, weightKg: 74, fev1PercentPredicted: 58, troughChangeL: 0.03, randomisedDaysAgo: 100 },
  { code: '102-002', siteId: 'site-102', sex: 'male', ageYears: 65, heightCm: 171, weightKg: 80, fev1PercentPredicted: 64, troughChangeL: 0.12, randomisedDaysAgo: 60 },
  { code: '102-003', siteId: 'site-102', sex: 'female', ageYears: 58, heightCm: 158, weightKg: 62, fev1PercentPredicted: 69, troughChangeL: 0.09, randomisedDaysAgo: 33 },
  { code: '102-004', siteId: 'site-102', sex: 'male', ageYears: 76, heightCm: 165, weightKg: 70, fev1PercentPredicted: 52, troughChangeL: 0.01, randomisedDaysAgo: 8 },
  { code: '201-001', siteId: 'site-201', sex: 'female', ageYears: 61, heightCm: 163, weightKg: 71, fev1PercentPredicted: 67, troughChangeL: 0.1, randomisedDaysAgo: 95 },
  { code: '201-002', siteId: 'site-201', sex: 'male', ageYears: 68, heightCm: 176, weightKg: 88, fev1PercentPredicted: 57, troughChangeL: 0.02, randomisedDaysAgo: 22 },
  { code: '201-003', siteId: 'site-201', sex: 'male', ageYears: 49, heightCm: 180, weightKg: 92, fev1PercentPredicted: 76, troughChangeL: 0.14, randomisedDaysAgo: 20 },
  { code: '201-004', siteId: 'site-201', sex: 'female', ageYears: 74, heightCm: 155, weightKg: 58, fev1PercentPredicted: 60, troughChangeL: 0.03, randomisedDaysAgo: 3 },
  { code: '301-001', siteId: 'site-301', sex: 'male', ageYears: 62, heightCm: 172, weightKg: 69, fev1PercentPredicted: 63, troughChangeL: 0.11, randomisedDaysAgo: 88 },
  { code: '301-002', siteId: 'site-301', sex: 'female', ageYears: 56, heightCm: 161, weightKg: 75, fev1PercentPredicted: 70, troughChangeL: 0.02, randomisedDaysAgo: 45 },
  { code: '301-003', siteId: 'site-301', sex: 'male', ageYears: 71, heightCm: 169, weightKg: 64, fev1PercentPredicted: 54, troughChangeL: 0.08, randomisedDaysAgo: 15 },
];

/** The file kinds sites send, as the upload pipeline reads them. */
export type DemoFileFormat = 'session-json' | 'effort-zip' | 'fhir-bundle';

/** Faults a technician can let through, each showing one finding in the engine's first pass. */
export type DemoEffortFault = 'slow-start' | 'cough-first-second' | 'early-end' | 'glottic-first-second' | 'submaximal';

/** How a site works: who uploads, which spirometer, which file kind, and how careful its coaching is. */
export interface DemoSitePractice {
  readonly coordinatorId: string;
  readonly technicianCodes: readonly string[];
  readonly device: { readonly manufacturer: string; readonly model: string; readonly serialNumber: string; readonly softwareVersion: string };
  /** What the spirometer records (a volume or a flow sensor), at 100 Hz. */
  readonly signal: 'volume' | 'flow';
  /** Tidal breaths recorded before the maximal inspiration. */
  readonly tidalBreaths: number;
  /** File kind of each session in turn, repeated. */
  readonly formats: readonly DemoFileFormat[];
  /** Chance that the technician lets a faulty effort through, per extra effort (up to five). */
  readonly faultyEffortChance: number;
  /** Chance that a session's two best FEV1 differ by about 0.2 L (poor repeatability). */
  readonly poorRepeatabilityChance: number;
  /** Whether the spirometer writes the day's syringe check into the session file. */
  readonly exportsCalibrationChecks: boolean;
}

/** Sites 102 and 301 coach less well than 101 and 201, so that site performance differs. */
export const DEMO_SITE_PRACTICE: Readonly<Record<DemoSiteId, DemoSitePractice>> = {
  'site-101': {
    coordinatorId: 'user-coordinator-101',
    technicianCodes: ['T101-A', 'T101-B'],
    device: { manufacturer: 'Nordhav Medical (fictional)', model: 'Brisa S2', serialNumber: 'BS2-41877', softwareVersion: '4.2.1' },
    signal: 'volume',
    tidalBreaths: 2,
    formats: ['session-json'],
    faultyEffortChance: 0.08,
    poorRepeatabilityChance: 0.05,
    exportsCalibrationChecks: true,
  },
  'site-102': {
    coordinatorId: 'user-coordinator-102',
    technicianCodes: ['T102-A', 'T102-B', 'T102-C'],
    device: { manufacturer: 'Ventolux Instruments (fictional)', model: 'VX-Flow 300', serialNumber: 'VX3-00913', softwareVersion: '2.9' },
    signal: 'flow',
    tidalBreaths: 0,
    formats: ['effort-zip'],
    faultyEffortChance: 0.3,
    poorRepeatabilityChance: 0.25,
    exportsCalibrationChecks: true,
  },
  'site-201': {
    coordinatorId: 'user-coordinator-201',
    technicianCodes: ['T201-A'],
    device: { manufacturer: 'Nordhav Medical (fictional)', model: 'Brisa S2', serialNumber: 'BS2-52210', softwareVersion: '4.2.1' },
    signal: 'volume',
    tidalBreaths: 1,
    formats: ['session-json', 'session-json', 'fhir-bundle'],
    faultyEffortChance: 0.1,
    poorRepeatabilityChance: 0.1,
    exportsCalibrationChecks: true,
  },
  'site-301': {
    coordinatorId: 'user-coordinator-201',
    technicianCodes: ['T301-A', 'T301-B'],
    device: { manufacturer: 'Ventolux Instruments (fictional)', model: 'VX-Flow 300', serialNumber: 'VX3-01442', softwareVersion: '2.7' },
    signal: 'flow',
    tidalBreaths: 0,
    formats: ['session-json', 'session-json', 'effort-zip'],
    faultyEffortChance: 0.35,
    poorRepeatabilityChance: 0.3,
    exportsCalibrationChecks: true,
  },
};

/** Something that goes differently with one session, named by `subject/visit/timepoint`. */
export type DemoSessionEvent =
  /** Registered, its file not sent yet. */
  | { readonly kind: 'awaiting-file' }
  /** An effort CSV exported with a device error code in place of one sample. */
  | { readonly kind: 'text-cell' }
  /** Efforts recorded at 50 Hz by a device left on its screening setting, below the 100 Hz minimum. */
  | { readonly kind: 'slow-sampling' }
  /** The file of another subject first, then the right one. */
  | { readonly kind: 'wrong-subject-first'; readonly namedSubjectCode: string }
  /** The day's syringe check read outside the 3 % tolerance (ATS/ERS 2019). */
  | { readonly kind: 'calibration-off'; readonly measuredVolumeL: number };

export const DEMO_SESSION_EVENTS: Readonly<Record<string, DemoSessionEvent>> = {
  '101-005/SCR/POST-BD': { kind: 'awaiting-file' },
  '201-004/V2/PRE-DOSE': { kind: 'awaiting-file' },
  '102-004/V2/PRE-DOSE': { kind: 'awaiting-file' },
  '102-002/V3/2H-POST-DOSE': { kind: 'text-cell' },
  '301-001/V4/PRE-DOSE': { kind: 'slow-sampling' },
  '102-003/V3/PRE-DOSE': { kind: 'wrong-subject-first', namedSubjectCode: '102-004' },
  '301-002/V3/PRE-DOSE': { kind: 'calibration-off', measuredVolumeL: 3.12 },
};
