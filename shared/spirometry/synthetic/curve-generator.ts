import type { FindingCode, Recording, SignalKind } from '../model.js';
import { type BlowFault, FAULT_TIMES_S, type FaultTimes, makeBlowFlow } from './blow-shape.js';
import { SeededRandom } from './seeded-random.js';

/** Faults of a whole recording: the blow faults plus those of the breathing around it. */
export type EffortFault = BlowFault | 'zero-drift' | 'hesitation-long' | 'fivc-excess' | 'double-breath';

/** What to generate; every field has a healthy-adult default. */
export interface EffortSpec {
  readonly pefLPerS?: number;
  readonly fvcL?: number;
  readonly riseTimeS?: number;
  readonly slowFraction?: number;
  readonly slowTauS?: number;
  /** Time from the start of the blow to the next event: the inspiration after it, or the tail (s). */
  readonly blowDurationS?: number;
  readonly sampleRateHz?: number;
  readonly signal?: SignalKind;
  /** Still lead-in at the start of the recording (s). */
  readonly leadInS?: number;
  readonly tidalBreaths?: number;
  /** Whether a maximal inspiration is recorded before the blow (always, when there are tidal breaths). */
  readonly maximalInspiration?: boolean;
  /** Pause at full inspiration (s). */
  readonly pauseS?: number;
  /** Whether the subject breathes in fully after the blow (FIVC). */
  readonly inspirationAfter?: boolean;
  /** FIVC - FVC (L) of the inspiration after the blow: -0.05 L by default, 0.4 L with the `fivc-excess` fault. */
  readonly fivcExcessL?: number;
  /** Still tail at the end of the recording (s). */
  readonly tailS?: number;
  /** Standard deviation of the flow sensor noise per sample (L/s); volume signals integrate it. */
  readonly flowNoiseLPerS?: number;
  /** Standard deviation of white noise on a volume signal (L). */
  readonly volumeNoiseL?: number;
  readonly faults?: readonly EffortFault[];
  /** Changes to the fault timing (s after time zero), e.g. a later early end for a slow-emptying lung. */
  readonly faultTimesS?: Partial<FaultTimes>;
  /**
   * Amplitude (L/s) of cardiogenic oscillation on the blow: a 1.2 Hz sine added to the expiratory
   * flow, fading out as the flow falls below 0.02 L/s (common practice: the heartbeat shows on the
   * low flows of a long expiration).
   */
  readonly cardiogenicLPerS?: number;
  readonly label?: string;
}

/** Exact values of the noise-free curve, from its definition (line through the peak with slope PEF). */
export interface EffortTruth {
  readonly blowStartS: number;
  readonly timeZeroS: number;
  readonly bevL: number;
  readonly fev1L: number;
  readonly fev6L: number | null;
  readonly fvcL: number;
  readonly pefLPerS: number;
  readonly fivcL: number | null;
  /** Findings the curve is built to show. */
  readonly expectedFindings: readonly FindingCode[];
  /** Findings that may also follow from the fault (e.g. no plateau after a glottic stop). */
  readonly allowedFindings: readonly FindingCode[];
}

/** One generated effort with the exact values of its noise-free curve. */
export interface GeneratedEffort {
  readonly recording: Recording;
  readonly truth: EffortTruth;
}

const TIDAL_VOLUME_L = 0.6;
const TIDAL_PERIOD_S = 3.5;
const INSPIRATORY_CAPACITY_L = 2.6;
const MAX_INSPIRATION_S = 1.3;
const POST_INSPIRATION_S = 1.8;
const ZERO_DRIFT_L_PER_S = 0.06;
const CARDIOGENIC_HZ = 1.2;
/** Relative band around the BEV limit in which a curve may or may not be flagged. */
const BEV_MARGIN = 0.15;
/**
 * Lowest flow (L/s) from which a built-in glottic closure is expected to be found: half as much
 * again as the smallest fall the detector takes (1.2 x 0.1 L/s, effort-findings.ts), kept here
 * as a number of its own so that a change of the detector cannot lower what the tests expect.
 */
const MIN_SHOWN_CLOSURE_FLOW_L_PER_S = 0.18;
/** Lowest flow (L/s) at which a built-in cough (a 90 % dip) is expected to be found: its dip then exceeds 0.12 L/s by half. */
const MIN_SHOWN_COUGH_FLOW_L_PER_S = 0.2;
const CARDIOGENIC_FADE_L_PER_S = 0.02;
/**
 * Simpson sub-steps per second of recording when integrating flow to volume (even per sample, so
 * at least two): 1 ms steps at 100 Hz, 0.5 ms at 1000 Hz. The truth is the trapezoidal integral on
 * the same grid; both err by under 3e-5 L on our blows, even across the 15 ms fall of a closure.
 */
const SUBSTEPS_PER_S = 1000;

const FAULT_FINDINGS: Readonly<Record<EffortFault, { expected: FindingCode[]; allowed: FindingCode[] }>> = {
  'slow-start': { expected: ['bev-excessive'], allowed: ['peak-late'] },
  'late-peak': { expected: ['peak-late'], allowed: [] },
  'early-end': { expected: ['end-early'], allowed: [] },
  'cough-first-second': { expected: ['cough-first-second'], allowed: [] },
  'cough-late': { expected: ['cough-late'], allowed: [] },
  'glottic-first-second': { expected: ['glottic-stop-first-second'], allowed: ['end-early'] },
  'glottic-late': { expected: ['glottic-stop-late'], allowed: ['end-early'] },
  'inspiration-during-blow': { expected: ['inspiration-during-blow'], allowed: [] },
  submaximal: { expected: [], allowed: [] },
  'zero-drift': { expected: ['zero-drift'], allowed: ['end-early'] },
  'hesitation-long': { expected: ['hesitation-long'], allowed: [] },
  'fivc-excess': { expected: ['fivc-exceeds-fvc'], allowed: [] },
  'double-breath': { expected: ['double-breath'], allowed: [] },
};

interface Segment {
  readonly startS: number;
  readonly endS: number;
  readonly flow: (uS: number) => number;
}

const sin2 = (x: number): number => Math.sin(x) ** 2;

/**
 * Generates one effort recording, deterministic for a given seed: lead-in, optional
 * tidal breaths and maximal inspiration, pause, the blow, optional inspiration after
 * it (and a second blow for `double-breath`), a still tail. Volume is the integral of
 * the flow (Simpson, sub-steps of at most 0.25 ms); noise is added after the truth is taken.
 */
export function generateEffort(spec: EffortSpec, seed: number): GeneratedEffort {
  const faults = spec.faults ?? [];
  const has = (fault: EffortFault): boolean => faults.includes(fault);
  const rate = spec.sampleRateHz ?? 1000;
  const blowFaults = faults.filter((f): f is BlowFault => !['zero-drift', 'hesitation-long', 'fivc-excess', 'double-breath'].includes(f));
  const shape = {
    pefLPerS: spec.pefLPerS ?? 8,
    fvcL: spec.fvcL ?? 5,
    riseTimeS: spec.riseTimeS ?? 0.1,
    slowFraction: spec.slowFraction ?? 0.15,
    slowTauS: spec.slowTauS ?? 1.5,
    faults: blowFaults,
    ...(spec.faultTimesS ? { faultTimesS: spec.faultTimesS } : {}),
  };
  const shapeFlow = makeBlowFlow(shape);
  const cardiogenicLPerS = spec.cardiogenicLPerS ?? 0;
  const blowFlow =
    cardiogenicLPerS > 0
      ? (u: number): number => {
          const flow = shapeFlow(u);
          const fade = Math.min(1, Math.max(0, flow / CARDIOGENIC_FADE_L_PER_S));
          return flow + cardiogenicLPerS * fade * Math.sin(2 * Math.PI * CARDIOGENIC_HZ * u);
        }
      : shapeFlow;
  // An early end is the subject breathing in (or being cut off) soon after stopping: no 1 s plateau.
  const blowDurationS = has('early-end')
    ? earlyEndDurationS(blowFlow, { ...FAULT_TIMES_S, ...spec.faultTimesS })
    : (spec.blowDurationS ?? 12);
  const tidal = spec.tidalBreaths ?? 0;
  const segments: Segment[] = [];
  let t = spec.leadInS ?? 0.5;
  for (let b = 0; b < tidal; b++) {
    segments.push({ startS: t, endS: t + TIDAL_PERIOD_S, flow: (u) => -((Math.PI * TIDAL_VOLUME_L) / TIDAL_PERIOD_S) * Math.sin((2 * Math.PI * u) / TIDAL_PERIOD_S) });
    t += TIDAL_PERIOD_S;
  }
  if (tidal > 0 || spec.maximalInspiration) {
    segments.push({ startS: t, endS: t + MAX_INSPIRATION_S, flow: (u) => -((2 * INSPIRATORY_CAPACITY_L) / MAX_INSPIRATION_S) * sin2((Math.PI * u) / MAX_INSPIRATION_S) });
    t += MAX_INSPIRATION_S;
  }
  t += has('hesitation-long') ? 3 : (spec.pauseS ?? 0.5);
  const blowStartS = t;
  segments.push({ startS: t, endS: t + blowDurationS, flow: blowFlow });
  t += blowDurationS;

  // The blow is evaluated once, on the fine grid of the recording's integration, for both the
  // truth and the recording (the flow functions dominate the cost of a synthetic effort).
  const substeps = 2 * Math.max(1, Math.ceil(SUBSTEPS_PER_S / rate / 2));
  const h = 1 / (rate * substeps);
  const blowFirstK = Math.ceil(blowStartS / h - 1e-9);
  const blowLastK = Math.ceil((blowStartS + blowDurationS) / h - 1e-9) - 1;
  const blowFine = new Float64Array(blowLastK - blowFirstK + 1);
  for (let j = 0; j < blowFine.length; j++) blowFine[j] = blowFlow((blowFirstK + j) * h - blowStartS);
  const truthBlow = truthOfBlow(blowFine, blowFirstK * h - blowStartS, h);
  let fivcL: number | null = null;
  if (spec.inspirationAfter || has('early-end') || has('fivc-excess') || has('double-breath')) {
    fivcL = truthBlow.fvcL + (spec.fivcExcessL ?? (has('fivc-excess') ? 0.4 : -0.05));
    const volume = fivcL;
    segments.push({ startS: t, endS: t + POST_INSPIRATION_S, flow: (u) => -((2 * volume) / POST_INSPIRATION_S) * sin2((Math.PI * u) / POST_INSPIRATION_S) });
    t += POST_INSPIRATION_S + 0.5;
  }
  if (has('double-breath')) {
    const second = makeBlowFlow({ ...shape, pefLPerS: shape.pefLPerS * 0.9, fvcL: shape.fvcL * 0.95, faults: [] });
    segments.push({ startS: t, endS: t + 5, flow: second });
    t += 5;
  }
  const totalS = t + (spec.tailS ?? 1);
  const drift = has('zero-drift') ? ZERO_DRIFT_L_PER_S : 0;
  const others = segments.filter((segment) => segment.flow !== blowFlow);
  /** Flow at fine-grid point k: the blow from its table, the other segments from their functions. */
  const flowAt = (k: number): number => {
    const time = k * h;
    let f = drift;
    if (k >= blowFirstK && k <= blowLastK) f += blowFine[k - blowFirstK];
    for (const s of others) if (time >= s.startS && time < s.endS) f += s.flow(time - s.startS);
    return f;
  };

  const n = Math.floor(totalS * rate) + 1;
  const dt = 1 / rate;
  const flow = new Float64Array(n);
  const volume = new Float64Array(n);
  flow[0] = flowAt(0);
  for (let i = 1; i < n; i++) {
    const a = (i - 1) * substeps;
    let sum = flow[i - 1];
    for (let k = 1; k < substeps; k++) sum += (k % 2 === 1 ? 4 : 2) * flowAt(a + k);
    flow[i] = flowAt(a + substeps);
    sum += flow[i];
    volume[i] = volume[i - 1] + (sum * h) / 3;
  }

  const random = new SeededRandom(seed);
  const signal = spec.signal ?? 'volume';
  const flowNoise = spec.flowNoiseLPerS ?? 0.01;
  const values = new Float64Array(n);
  if (signal === 'flow') {
    for (let i = 0; i < n; i++) values[i] = flow[i] + random.normal(0, flowNoise);
  } else {
    const volumeNoise = spec.volumeNoiseL ?? 0.0002;
    let walk = 0;
    for (let i = 0; i < n; i++) {
      walk += random.normal(0, flowNoise) * dt;
      values[i] = volume[i] + walk + random.normal(0, volumeNoise);
    }
  }

  const expected = new Set<FindingCode>();
  const allowed = new Set<FindingCode>();
  for (const fault of faults) {
    FAULT_FINDINGS[fault].expected.forEach((c) => expected.add(c));
    FAULT_FINDINGS[fault].allowed.forEach((c) => allowed.add(c));
  }
  // Expectations that follow from the curve's own numbers rather than from the fault alone.
  // BEV against its limit, the greater of 5 % of FVC and 0.100 L (ATS/ERS 2019, from memory): a
  // late peak or a closure that shrinks FVC can break it too; near the limit either way is allowed.
  const bevLimitL = Math.max(0.1, 0.05 * truthBlow.fvcL);
  if (truthBlow.bevL > (1 + BEV_MARGIN) * bevLimitL) expected.add('bev-excessive');
  else if (truthBlow.bevL > (1 - BEV_MARGIN) * bevLimitL) allowed.add('bev-excessive');
  // A closure or cough where the lung empties too slowly to show it is allowed, not expected.
  const times = { ...FAULT_TIMES_S, ...spec.faultTimesS };
  for (const [fault, code, atS, beforeS, minFlowLPerS] of [
    ['glottic-first-second', 'glottic-stop-first-second', times.glotticFirstSecond, 0.005, MIN_SHOWN_CLOSURE_FLOW_L_PER_S],
    ['glottic-late', 'glottic-stop-late', times.glotticLate, 0.005, MIN_SHOWN_CLOSURE_FLOW_L_PER_S],
    ['cough-first-second', 'cough-first-second', times.coughFirstSecond, times.coughWidth, MIN_SHOWN_COUGH_FLOW_L_PER_S],
    ['cough-late', 'cough-late', times.coughLate, times.coughWidth, MIN_SHOWN_COUGH_FLOW_L_PER_S],
  ] as const) {
    if (!has(fault) || blowFlow(truthBlow.timeZeroS + atS - beforeS) >= minFlowLPerS) continue;
    expected.delete(code);
    allowed.add(code);
  }
  return {
    recording: { signal, sampleRateHz: rate, startTimeS: 0, values, label: spec.label ?? `synthetic-${seed}` },
    truth: {
      blowStartS,
      timeZeroS: blowStartS + truthBlow.timeZeroS,
      bevL: truthBlow.bevL,
      fev1L: truthBlow.volumeAt(truthBlow.timeZeroS + 1),
      fev6L: truthBlow.timeZeroS + 6 <= blowDurationS ? truthBlow.volumeAt(truthBlow.timeZeroS + 6) : null,
      fvcL: truthBlow.fvcL,
      pefLPerS: truthBlow.pefLPerS,
      fivcL,
      expectedFindings: [...expected],
      allowedFindings: [...allowed],
    },
  };
}

/** Blow length for `early-end`: time zero, the taper, then 0.3 s before breathing in. */
function earlyEndDurationS(blowFlow: (u: number) => number, times: FaultTimes): number {
  // Time zero lies within the first 2 s even after the longest slow start.
  const { timeZeroS } = integrateBlow(blowFlow, 2);
  return timeZeroS + times.earlyEnd + times.earlyEndTaper + 0.3;
}

const TRUTH_STEP_S = 2.5e-4;

/** Truth values of a blow tabulated every `stepS` from `firstU` (s after its start): trapezoidal volume, peak and time zero. */
function truthOfBlow(blowFine: Float64Array, firstU: number, stepS: number) {
  const m = blowFine.length;
  const vol = new Float64Array(m);
  // The flow before the first grid point (at most one step after the start) starts from zero.
  vol[0] = 0.5 * blowFine[0] * firstU;
  let peak = 0;
  let fvcL = vol[0];
  for (let j = 1; j < m; j++) {
    vol[j] = vol[j - 1] + 0.5 * (blowFine[j - 1] + blowFine[j]) * stepS;
    if (blowFine[j] > blowFine[peak]) peak = j;
    if (vol[j] > fvcL) fvcL = vol[j];
  }
  const volumeAt = (u: number): number => {
    const x = Math.min(m - 1, Math.max(0, (u - firstU) / stepS));
    const i = Math.min(m - 2, Math.floor(x));
    return vol[i] + (vol[i + 1] - vol[i]) * (x - i);
  };
  const pefLPerS = blowFine[peak];
  const timeZeroS = firstU + peak * stepS - vol[peak] / pefLPerS;
  return { timeZeroS, bevL: volumeAt(timeZeroS), fvcL, pefLPerS, volumeAt };
}

/** Integrates the noise-free blow finely and finds its peak and time zero. */
function integrateBlow(blowFlow: (u: number) => number, durationS: number) {
  const m = Math.round(durationS / TRUTH_STEP_S);
  const vol = new Float64Array(m + 1);
  let peak = 0;
  let peakFlow = blowFlow(0);
  let prev = peakFlow;
  for (let i = 1; i <= m; i++) {
    const mid = blowFlow((i - 0.5) * TRUTH_STEP_S);
    const cur = blowFlow(i * TRUTH_STEP_S);
    vol[i] = vol[i - 1] + ((prev + 4 * mid + cur) * TRUTH_STEP_S) / 6;
    if (cur > peakFlow) {
      peak = i;
      peakFlow = cur;
    }
    prev = cur;
  }
  const volumeAt = (u: number): number => {
    const x = Math.min(m, Math.max(0, u / TRUTH_STEP_S));
    const i = Math.min(m - 1, Math.floor(x));
    return vol[i] + (vol[i + 1] - vol[i]) * (x - i);
  };
  const pefLPerS = peakFlow;
  const timeZeroS = peak * TRUTH_STEP_S - vol[peak] / pefLPerS;
  let fvcL = 0;
  for (let i = 0; i <= m; i++) fvcL = Math.max(fvcL, vol[i]);
  return { timeZeroS, bevL: volumeAt(timeZeroS), fvcL, pefLPerS, volumeAt };
}

/** A session of efforts with controlled variability between them (for repeatability tests and the demo). */
export interface SessionSpec {
  readonly efforts: number;
  readonly base: EffortSpec;
  /** Standard deviation of FVC between efforts (L); 0.3 or more makes poor repeatability. */
  readonly fvcSdL?: number;
  /** Standard deviation of PEF between efforts, as a fraction of PEF. */
  readonly pefSdFraction?: number;
  /** Per-effort changes (faults, for example), by position. */
  readonly perEffort?: readonly (Partial<EffortSpec> | undefined)[];
}

/** Generates a session: effort i uses seed derived from `seed` and i. */
export function generateSession(spec: SessionSpec, seed: number): GeneratedEffort[] {
  const random = new SeededRandom(seed);
  const out: GeneratedEffort[] = [];
  for (let i = 0; i < spec.efforts; i++) {
    const fvcL = (spec.base.fvcL ?? 5) + random.normal(0, spec.fvcSdL ?? 0.03);
    const pefLPerS = (spec.base.pefLPerS ?? 8) * (1 + random.normal(0, spec.pefSdFraction ?? 0.03));
    const effortSeed = (seed * 7919 + i * 104729) | 0;
    out.push(generateEffort({ ...spec.base, fvcL, pefLPerS, label: `effort-${i + 1}.csv`, ...spec.perEffort?.[i] }, effortSeed));
  }
  return out;
}

/** Writes a recording as an effort CSV (header `time_s,volume_l` or `time_s,flow_l_s`, as `parseEffortCsv` reads it). */
export function effortToCsv(rec: Recording): string {
  const timeDecimals = Math.max(3, Math.ceil(Math.log10(rec.sampleRateHz)) + 1);
  const header = rec.signal === 'volume' ? 'time_s,volume_l' : 'time_s,flow_l_s';
  const lines = [header];
  for (let i = 0; i < rec.values.length; i++) {
    lines.push(`${(rec.startTimeS + i / rec.sampleRateHz).toFixed(timeDecimals)},${rec.values[i].toFixed(6)}`);
  }
  return lines.join('\n') + '\n';
}
