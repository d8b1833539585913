/**
 * Shared vocabulary of the spirometry engine. Units are in the names:
 * volumes in litres BTPS (L), flows in L/s (expiration positive), times in seconds.
 * Everything in `shared/spirometry` is pure: no I/O, no clock, no randomness
 * (the synthetic generator takes its seed as an argument).
 */

/** Which physical quantity a recording holds. */
export type SignalKind = 'volume' | 'flow';

/** One uniformly sampled recording of one effort, as uploaded. */
export interface Recording {
  /** `volume`: cumulative expired volume (L); `flow`: L/s, expiration positive. */
  readonly signal: SignalKind;
  readonly sampleRateHz: number;
  /** Time (s) of the first sample on the file's own time axis. */
  readonly startTimeS: number;
  readonly values: ArrayLike<number>;
  /** Where it came from (file name or effort label), for messages. */
  readonly label: string;
}

/** Both signals of a recording on one time axis, derived once. */
export interface DualSignal {
  readonly sampleRateHz: number;
  readonly startTimeS: number;
  readonly volumeL: Float64Array;
  readonly flowLPerS: Float64Array;
}

/** An FEV1 or FVC verdict, as the reader gives it and the engine suggests it. */
export type Verdict = 'acceptable' | 'usable' | 'not_acceptable';

/** Session grade for FEV1 or for FVC (ATS/ERS 2019 Table 10). */
export type Grade = 'A' | 'B' | 'C' | 'D' | 'E' | 'F' | 'U';

/** Tidemark's own finding codes; documented in `finding-codes.ts`. */
export type FindingCode =
  | 'bev-excessive'
  | 'hesitation-long'
  | 'end-early'
  | 'cough-first-second'
  | 'cough-late'
  | 'glottic-stop-first-second'
  | 'glottic-stop-late'
  | 'blow-submaximal'
  | 'peak-late'
  | 'zero-drift'
  | 'inspiration-during-blow'
  | 'double-breath'
  | 'fivc-exceeds-fvc';

/** One automated finding, explained with its numbers. */
export interface Finding {
  readonly code: FindingCode;
  /** Plain words with the measured value and the limit, e.g. "BEV 0.210 L = 6.3 % of FVC; limit 0.150 L". */
  readonly message: string;
  /** The numbers behind the message, for display and audit. */
  readonly values: Readonly<Record<string, number>>;
}

/** End-of-forced-expiration evidence for one effort. */
export interface EndOfTest {
  /** Whether any EOFE criterion is met. */
  readonly met: boolean;
  /** Volume change (L) over the last 1 s of expiration (the plateau window ending at the end of forced expiration). */
  readonly lastSecondVolumeChangeL: number;
  /** Whether the plateau criterion (<= limit in the last 1 s) is met. */
  readonly plateau: boolean;
  /** Whether FET reached the long-expiration limit (15 s). */
  readonly longExpiration: boolean;
  /** Whether FVC is within tolerance of, or above, the largest prior FVC in the session (set at session level). */
  readonly repeatsPriorFvc: boolean;
}

/** Everything measured on one effort. Volumes are relative to maximal inspiration. */
export interface EffortMetrics {
  /** Time zero on the file's time axis (s). */
  readonly timeZeroS: number;
  readonly bevL: number;
  /**
   * Time from maximal inspiration to time zero (s). Maximal inspiration is where the inspiration
   * before the blow ended (the start of any pause at full inspiration), or the first sample when
   * the recording holds no inspiration.
   */
  readonly hesitationTimeS: number;
  readonly fev075L: number | null;
  readonly fev1L: number | null;
  /**
   * Null when the blow lasts less than 6 s after time zero: the subject breathed in, or the
   * recording ended, before time zero + 6 s. A subject who reached a plateau earlier and stayed on
   * the mouthpiece without breathing in has an FEV6 (the volume held, about FVC).
   */
  readonly fev6L: number | null;
  readonly fvcL: number;
  readonly pefLPerS: number;
  /** Time from time zero to PEF (s). */
  readonly timeToPefS: number;
  readonly fef25LPerS: number | null;
  readonly fef50LPerS: number | null;
  readonly fef75LPerS: number | null;
  readonly fef2575LPerS: number | null;
  /**
   * Forced expiratory time (s): time zero to the end of forced expiration, which is where the
   * plateau is first reached, or else the last expiratory sample (before a breath in or the
   * end of the recording).
   */
  readonly fetS: number;
  /** Inspiratory vital capacity after the blow, when the recording has one. */
  readonly fivcL: number | null;
  readonly endOfTest: EndOfTest;
  /** Sample indices of the blow within the recording. */
  readonly maxInspirationIndex: number;
  readonly peakFlowIndex: number;
  readonly endOfExpirationIndex: number;
}

/** Ready-to-plot series of one effort, time from time zero, volumes from maximal inspiration. */
export interface PlotSeries {
  readonly timeS: number[];
  readonly volumeL: number[];
  readonly flowLPerS: number[];
  /** Points on the back-extrapolation line (two points are enough). */
  readonly backExtrapolation: { readonly timeS: [number, number]; readonly volumeL: [number, number] };
}

/** Numeric parameters of curve processing and findings, taken from the protocol rule set. */
export interface EngineParameters {
  /** Minimum sampling rate accepted (Hz). */
  readonly minSampleRateHz: number;
  /**
   * Back-extrapolation of time zero (s). 0: the line through the point of peak flow with slope
   * equal to peak flow (ATS/ERS 2019, from memory); above 0: the steepest volume slope over this
   * window (0.080 s is the ATS/ERS 2005 practice, from memory).
   */
  readonly backExtrapolationWindowS: number;
  /** BEV limit: the greater of this fraction of FVC ... */
  readonly bevMaxFractionOfFvc: number;
  /** ... and this volume (L). */
  readonly bevMaxL: number;
  readonly hesitationMaxS: number;
  /** Plateau: forced expiration ends where the volume gained over the preceding window is at or below this (L). */
  readonly plateauMaxVolumeChangeL: number;
  /** The plateau window (s). */
  readonly plateauWindowS: number;
  /** FET at or above which expiration counts as ended (s). */
  readonly longExpirationFetS: number;
  /** FIVC - FVC limit: the greater of this volume ... */
  readonly fivcExcessMaxL: number;
  /** ... and this fraction of FVC. */
  readonly fivcExcessMaxFractionOfFvc: number;
  /** Time to PEF above which the peak is called late (s) [practice]. */
  readonly peakLateS: number;
  /** PEF below this fraction of the session's best PEF is called submaximal [practice]. */
  readonly submaximalPefFraction: number;
  /** Cough: a flow dip of at least this fraction of the flow around it, recovering, in the first second [practice]. */
  readonly coughDipFraction: number;
  /** Glottic closure: flow falls to at most this (L/s) within this time (s) from a flow above it [practice]. */
  readonly glotticStopFlowLPerS: number;
  readonly glotticStopFallTimeS: number;
  /** Volume drift before the blow above this (L/s averaged) flags a zero/baseline error [practice]. */
  readonly zeroDriftMaxLPerS: number;
}

/** Demographics at test, for predicted values and for the age-dependent grade thresholds. */
export interface Demographics {
  readonly ageYears: number;
  readonly heightCm: number;
  readonly sex: 'female' | 'male';
  readonly ethnicity?: Ethnicity;
}

export type Ethnicity =
  | 'caucasian'
  | 'african-american'
  | 'north-east-asian'
  | 'south-east-asian'
  | 'other'
  | 'mexican-american';

export type EquationsId = 'gli-2012' | 'gli-global-2022' | 'nhanes3' | 'ecsc-1993';

/** Spirometric parameters that reference equations may cover. */
export type ReferenceParameter = 'fev1' | 'fvc' | 'fev1Fvc' | 'fef2575' | 'fef75' | 'pef' | 'fev6';

/** Predicted values for one parameter; null fields mean not available (with `reason`). */
export interface PredictedValue {
  readonly predicted: number | null;
  readonly lln: number | null;
  readonly uln: number | null;
  /** Present when a measured value was given. */
  readonly z: number | null;
  readonly percentPredicted: number | null;
  /** Why there is no value (out of range, parameter not in the set...). */
  readonly reason?: string;
}

/** Bad input, with where it is: the message names the problem in words a site coordinator understands. */
export class SpirometryInputError extends Error {
  constructor(
    /** Stable machine-readable code, e.g. `csv-header`, `csv-number`, `sample-rate`. */
    readonly code: string,
    message: string,
    readonly location: { readonly file?: string; readonly row?: number; readonly column?: string } = {},
  ) {
    super(message);
    this.name = 'SpirometryInputError';
  }
}
