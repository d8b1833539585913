import type { FindingCode } from './model.js';

/** How sure we are of the rule behind a finding: read in the standard, recalled from memory, or common practice. */
export type SourceStatus = 'verified' | 'memory' | 'practice';

/** One entry of the finding catalogue: what a finding code means to a reader. */
export interface FindingDescription {
  readonly code: FindingCode;
  /** Short title for lists and chips. */
  readonly title: string;
  /** Plain words: what the engine saw and why it matters. */
  readonly explanation: string;
  /**
   * Verdicts the finding bears on in the ATS/ERS 2019 Table 7 acceptability rules
   * (reconstructed from memory). Empty: no rule uses it; it is shown for the reader's judgement.
   */
  readonly affects: readonly ('fev1' | 'fvc')[];
  /** Which verdict levels it can cost: acceptable only, or acceptable and usable. */
  readonly costs: 'acceptable' | 'acceptable-and-usable' | 'none';
  /** Where the rule or threshold comes from. */
  readonly source: string;
  readonly status: SourceStatus;
  /** Whether the finding is computed per session (comparing efforts) rather than from one curve. */
  readonly sessionLevel: boolean;
}

const ATS_ERS_2019 = 'Graham BL et al., ATS/ERS 2019, Table 7 (reconstructed from memory)';

/**
 * The documented list of Tidemark's finding codes. Codes are part of our interface
 * (analysis output, exports, reader screens): never rename one; add new ones.
 */
export const FINDING_CATALOGUE: Readonly<Record<FindingCode, FindingDescription>> = {
  'bev-excessive': {
    code: 'bev-excessive',
    title: 'Slow start (excessive BEV)',
    explanation:
      'The volume exhaled before time zero (back-extrapolated volume) is above the greater of 5 % of FVC and 0.100 L: the blow did not start crisply, so FEV1 is overstated.',
    affects: ['fev1', 'fvc'],
    costs: 'acceptable-and-usable',
    source: ATS_ERS_2019,
    status: 'memory',
    sessionLevel: false,
  },
  'hesitation-long': {
    code: 'hesitation-long',
    title: 'Long hesitation',
    explanation:
      'More than 2 s passed between full inspiration and time zero; a long pause at full inspiration can lower the flows and volumes.',
    affects: [],
    costs: 'none',
    source: 'Graham BL et al., ATS/ERS 2019 (hesitation time 2 s or less)',
    status: 'memory',
    sessionLevel: false,
  },
  'end-early': {
    code: 'end-early',
    title: 'No end-of-test plateau',
    explanation:
      'Neither end-of-forced-expiration criterion seen on the curve is met: the volume still rose by more than 0.025 L in the last second and the expiration lasted less than 15 s. The FVC may be understated, unless the session shows it repeats the largest prior FVC (judged across efforts).',
    affects: ['fvc'],
    costs: 'acceptable',
    source: ATS_ERS_2019,
    status: 'memory',
    sessionLevel: false,
  },
  'cough-first-second': {
    code: 'cough-first-second',
    title: 'Cough in the first second',
    explanation: 'A sharp dip in flow that recovers, within the first second after time zero: FEV1 is unreliable.',
    affects: ['fev1'],
    costs: 'acceptable-and-usable',
    source: ATS_ERS_2019 + '; dip detection thresholds are common practice',
    status: 'memory',
    sessionLevel: false,
  },
  'cough-late': {
    code: 'cough-late',
    title: 'Cough after the first second',
    explanation:
      'A sharp dip in flow that recovers, after the first second: FEV1 is not affected; the reader judges whether it changed the FVC.',
    affects: [],
    costs: 'none',
    source: 'common practice',
    status: 'practice',
    sessionLevel: false,
  },
  'glottic-stop-first-second': {
    code: 'glottic-stop-first-second',
    title: 'Glottic closure in the first second',
    explanation: 'Flow fell abruptly to about zero within the first second (closure of the glottis): neither FEV1 nor FVC is valid.',
    affects: ['fev1', 'fvc'],
    costs: 'acceptable-and-usable',
    source: ATS_ERS_2019 + '; abrupt-fall thresholds are common practice',
    status: 'memory',
    sessionLevel: false,
  },
  'glottic-stop-late': {
    code: 'glottic-stop-late',
    title: 'Glottic closure after the first second',
    explanation:
      'Flow fell abruptly to about zero after the first second (closure of the glottis, or the subject stopping at once): the flat volume that follows is not a true plateau, so the FVC is understated, by much in a slowly emptying lung; FEV1 can still be used.',
    affects: ['fvc'],
    costs: 'acceptable',
    source: ATS_ERS_2019 + '; abrupt-fall thresholds are common practice',
    status: 'memory',
    sessionLevel: false,
  },
  'blow-submaximal': {
    code: 'blow-submaximal',
    title: 'Submaximal blow',
    explanation: "PEF well below the session's best PEF: the subject may not have blown as hard as possible.",
    affects: [],
    costs: 'none',
    source: 'common practice',
    status: 'practice',
    sessionLevel: true,
  },
  'peak-late': {
    code: 'peak-late',
    title: 'Late peak flow',
    explanation: 'Peak flow came late after time zero: the blow was not explosive from the start, and PEF and FEV1 may be low.',
    affects: [],
    costs: 'none',
    source: 'common practice',
    status: 'practice',
    sessionLevel: false,
  },
  'zero-drift': {
    code: 'zero-drift',
    title: 'Baseline drift (zero-flow error)',
    explanation:
      'The volume drifted while the subject was still (before the blow): the flow zero of the device was probably set while air was moving, which biases every volume.',
    affects: ['fev1', 'fvc'],
    costs: 'acceptable-and-usable',
    source: ATS_ERS_2019 + ' ("no faulty zero-flow setting"); drift threshold is common practice',
    status: 'memory',
    sessionLevel: false,
  },
  'inspiration-during-blow': {
    code: 'inspiration-during-blow',
    title: 'Breath in during the blow',
    explanation: 'The volume fell during the forced expiration (the subject breathed in), then expiration went on: the expiration was not one continuous blow.',
    affects: [],
    costs: 'none',
    source: 'common practice',
    status: 'practice',
    sessionLevel: false,
  },
  'double-breath': {
    code: 'double-breath',
    title: 'Second blow in the recording',
    explanation:
      'Besides the blow analysed, the recording holds another forced expiration (at least half the PEF and half the FVC): the subject blew twice; the reader checks that the right blow was taken.',
    affects: [],
    costs: 'none',
    source: 'common practice',
    status: 'practice',
    sessionLevel: false,
  },
  'fivc-exceeds-fvc': {
    code: 'fivc-exceeds-fvc',
    title: 'Inspiration after the blow larger than FVC',
    explanation:
      'The inspiration after the blow (FIVC) exceeds FVC by more than the greater of 0.100 L and 5 % of FVC: the blow did not start from full inspiration.',
    affects: ['fev1', 'fvc'],
    costs: 'acceptable',
    source: ATS_ERS_2019 + ' (one secondary source gives 0.150 L)',
    status: 'memory',
    sessionLevel: false,
  },
};
