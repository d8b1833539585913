import type { DualSignal, EffortMetrics, EngineParameters, Finding } from './model.js';
import type { MeasuredEffort } from './effort-metrics.js';
import type { ForcedBlow } from './forced-blow.js';
import { movingAverage, sampleTimeS } from './signal.js';

/** Detector tuning. All common practice, tuned on our synthetic curves so that clean efforts give no finding. */
export const DETECTOR_TUNING = {
  /** Flows are smoothed over this span (s) before looking for dips and stops, so single-sample noise cannot trigger them. */
  smoothingS: 0.02,
  /** A cough dip must recover within this time (s) either side of its lowest point. */
  coughRecoveryWindowS: 0.15,
  /**
   * ... and be at least this deep (L/s), whatever its relative depth. Low enough for a cough
   * late in an obstructed blow, where the flow is only 0.2-0.4 L/s; the 20 ms smoothing keeps
   * sensor noise (0.03 L/s a sample) and cardiogenic oscillation (a 1 Hz swing recovers far
   * less within the recovery window) well below it.
   */
  coughMinDipLPerS: 0.12,
  /**
   * Glottic closure: the smoothed flow falls through the stop flow after a steady flow of at
   * least this multiple of it (mean over `glotticSteadyS` ending half the fall time before) ... An
   * obstructed lung still empties at 0.12-0.4 L/s after the first second, and a closure there
   * loses flow x slow time constant, half a litre or more. What tells a closure from the
   * natural decay (which takes a third of a second or more to halve), from a cardiogenic swing
   * (about 1 Hz, so adjacent tenths of a second differ by about its amplitude) and from noise
   * (averaged out over a tenth of a second) is a large step between two means:
   */
  glotticFromFactor: 1.2,
  glotticSteadyS: 0.1,
  /** ... then stays near zero (within this multiple of the stop flow either way) ... */
  glotticHoldFactor: 0.75,
  /** ... for this long (s) after the fall time, or until the recording ends ... */
  glotticHoldS: 0.1,
  /** ... and the mean flow held is at least this multiple of the stop flow below the steady flow before ... */
  glotticMinDropFactor: 1,
  /**
   * ... and across the fall time centred on the crossing the flow falls by at least this multiple
   * of the stop flow: a closure falls all the way within it, a quick taper (the subject giving up
   * over half a second) only part of the way.
   */
  glotticMinFallFactor: 0.8,
  /** A fall of volume below its running maximum during the blow larger than this (L) is a breath in. */
  inspirationDipL: 0.025,
  /** Zero drift is measured on a still stretch (|flow| at most this, L/s) before the blow ... */
  stillFlowLPerS: 0.15,
  /** ... trimmed by this much (s) at both ends, and at least this long (s) after trimming. */
  stillTrimS: 0.1,
  stillMinS: 0.3,
  /** Another expiration with at least these fractions of PEF and FVC is a second blow. */
  secondBlowFraction: 0.5,
} as const;

const fmt = (x: number, digits: number): string => x.toFixed(digits);

/**
 * Per-effort automated findings, each explained with its numbers: the ATS/ERS 2019 (Graham 2019)
 * quality criteria (thresholds from memory, in the rule set) and common-practice detectors.
 * `blow-submaximal` needs the session and is not produced here.
 */
export function findEffortFindings(sig: DualSignal, measured: MeasuredEffort, params: EngineParameters): Finding[] {
  const { metrics, blow } = measured;
  const endIndex = measured.endOfExpiration.index;
  const flowS = movingAverage(sig.flowLPerS, sig.sampleRateHz, DETECTOR_TUNING.smoothingS);
  const findings: Finding[] = [];
  const add = (code: Finding['code'], message: string, values: Record<string, number>): void => {
    findings.push({ code, message, values });
  };
  const fvc = metrics.fvcL;
  const firstSecondEndS = metrics.timeZeroS + 1;

  const bevLimitL = Math.max(params.bevMaxFractionOfFvc * fvc, params.bevMaxL);
  if (metrics.bevL > bevLimitL) {
    add(
      'bev-excessive',
      `BEV ${fmt(metrics.bevL, 3)} L = ${fmt((100 * metrics.bevL) / fvc, 1)} % of FVC; limit ${fmt(bevLimitL, 3)} L ` +
        `(greater of ${fmt(100 * params.bevMaxFractionOfFvc, 0)} % of FVC and ${fmt(params.bevMaxL, 3)} L)`,
      { bevL: metrics.bevL, fvcL: fvc, limitL: bevLimitL },
    );
  }
  if (metrics.hesitationTimeS > params.hesitationMaxS) {
    add(
      'hesitation-long',
      `Hesitation ${fmt(metrics.hesitationTimeS, 2)} s from full inspiration to time zero; limit ${fmt(params.hesitationMaxS, 2)} s`,
      { hesitationTimeS: metrics.hesitationTimeS, limitS: params.hesitationMaxS },
    );
  }
  if (!metrics.endOfTest.met) {
    add(
      'end-early',
      `No end of forced expiration: volume rose ${fmt(metrics.endOfTest.lastSecondVolumeChangeL, 3)} L in the last ` +
        `${fmt(params.plateauWindowS, 0)} s of expiration (plateau limit ${fmt(params.plateauMaxVolumeChangeL, 3)} L) and FET ` +
        `${fmt(metrics.fetS, 2)} s is under ${fmt(params.longExpirationFetS, 0)} s`,
      { lastSecondVolumeChangeL: metrics.endOfTest.lastSecondVolumeChangeL, fetS: metrics.fetS },
    );
  }
  if (metrics.timeToPefS > params.peakLateS) {
    add(
      'peak-late',
      `Peak flow ${fmt(metrics.timeToPefS * 1000, 0)} ms after time zero; limit ${fmt(params.peakLateS * 1000, 0)} ms`,
      { timeToPefS: metrics.timeToPefS, limitS: params.peakLateS },
    );
  }
  if (metrics.fivcL !== null) {
    const excessL = metrics.fivcL - fvc;
    const limitL = Math.max(params.fivcExcessMaxL, params.fivcExcessMaxFractionOfFvc * fvc);
    if (excessL > limitL) {
      add(
        'fivc-exceeds-fvc',
        `FIVC ${fmt(metrics.fivcL, 3)} L exceeds FVC ${fmt(fvc, 3)} L by ${fmt(excessL, 3)} L; limit ${fmt(limitL, 3)} L ` +
          `(greater of ${fmt(params.fivcExcessMaxL, 3)} L and ${fmt(100 * params.fivcExcessMaxFractionOfFvc, 0)} % of FVC)`,
        { fivcL: metrics.fivcL, fvcL: fvc, excessL, limitL },
      );
    }
  }

  const stop = findGlotticStop(sig, flowS, blow, params);
  if (stop) {
    const early = stop.timeS <= firstSecondEndS;
    add(
      early ? 'glottic-stop-first-second' : 'glottic-stop-late',
      `Flow fell from ${fmt(stop.fromFlowLPerS, 2)} L/s to ${fmt(stop.toFlowLPerS, 2)} L/s within ` +
        `${fmt(params.glotticStopFallTimeS * 1000, 0)} ms at ${fmt(stop.timeS - metrics.timeZeroS, 2)} s after time zero` +
        (early ? ' (first second)' : ''),
      { atS: stop.timeS - metrics.timeZeroS, fromFlowLPerS: stop.fromFlowLPerS, toFlowLPerS: stop.toFlowLPerS },
    );
  }
  const coughs = findCoughs(sig, flowS, blow, endIndex, params, stop?.index ?? -1);
  const firstEarly = coughs.find((c) => c.timeS <= firstSecondEndS);
  const firstLate = coughs.find((c) => c.timeS > firstSecondEndS);
  for (const [cough, code] of [
    [firstEarly, 'cough-first-second'],
    [firstLate, 'cough-late'],
  ] as const) {
    if (!cough) continue;
    add(
      code,
      `Flow dipped from ${fmt(cough.aroundLPerS, 2)} L/s to ${fmt(cough.lowLPerS, 2)} L/s and recovered, ` +
        `at ${fmt(cough.timeS - metrics.timeZeroS, 2)} s after time zero (dip ${fmt((100 * cough.depthFraction), 0)} %; ` +
        `limit ${fmt(100 * params.coughDipFraction, 0)} % and ${fmt(DETECTOR_TUNING.coughMinDipLPerS, 2)} L/s)`,
      { atS: cough.timeS - metrics.timeZeroS, lowLPerS: cough.lowLPerS, aroundLPerS: cough.aroundLPerS },
    );
  }

  const drift = findZeroDrift(sig, flowS, blow);
  if (drift && Math.abs(drift.flowLPerS) > params.zeroDriftMaxLPerS) {
    add(
      'zero-drift',
      `Volume drifted ${fmt(drift.flowLPerS * drift.durationS, 3)} L over ${fmt(drift.durationS, 2)} s of stillness before the blow ` +
        `(${fmt(drift.flowLPerS, 3)} L/s; limit ${fmt(params.zeroDriftMaxLPerS, 3)} L/s)`,
      { driftLPerS: drift.flowLPerS, durationS: drift.durationS, limitLPerS: params.zeroDriftMaxLPerS },
    );
  }

  const v = sig.volumeL;
  let runMax = v[blow.peakFlowIndex];
  let deepest = 0;
  let deepestIndex = -1;
  // A fall followed by more expiration lies before the blow's largest volume.
  const dipSearchEnd = Math.min(endIndex, blow.maxVolumeIndex);
  for (let i = blow.peakFlowIndex; i <= dipSearchEnd; i++) {
    if (v[i] > runMax) runMax = v[i];
    else if (runMax - v[i] > deepest) {
      deepest = runMax - v[i];
      deepestIndex = i;
    }
  }
  if (deepest > DETECTOR_TUNING.inspirationDipL) {
    add(
      'inspiration-during-blow',
      `Volume fell ${fmt(deepest, 3)} L during the blow, ${fmt(sampleTimeS(sig, deepestIndex) - metrics.timeZeroS, 2)} s ` +
        `after time zero, then expiration went on (limit ${fmt(DETECTOR_TUNING.inspirationDipL, 3)} L)`,
      { dipL: deepest, atS: sampleTimeS(sig, deepestIndex) - metrics.timeZeroS },
    );
  }

  const second = findSecondBlow(sig, flowS, blow, metrics);
  if (second) {
    add(
      'double-breath',
      `Another expiration in the recording at ${fmt(second.timeS - metrics.timeZeroS, 2)} s from time zero: ` +
        `${fmt(second.volumeL, 2)} L at up to ${fmt(second.peakLPerS, 2)} L/s (analysed blow: FVC ${fmt(fvc, 2)} L, PEF ${fmt(metrics.pefLPerS, 2)} L/s)`,
      { volumeL: second.volumeL, peakLPerS: second.peakLPerS, atS: second.timeS - metrics.timeZeroS },
    );
  }
  return findings;
}

interface GlotticStop {
  readonly index: number;
  readonly timeS: number;
  readonly fromFlowLPerS: number;
  readonly toFlowLPerS: number;
}

/**
 * First abrupt stop of flow after the peak: the smoothed flow falls through the stop flow, by at
 * least 0.8x the stop flow across the fall time centred there. In the tenth of a second ending
 * half a fall time before, its mean was at least 1.2x the stop flow; in the tenth of a second from
 * half a fall time after, it stays within 0.75x the stop flow of zero, its mean there at least the
 * stop flow below the mean before.
 */
function findGlotticStop(sig: DualSignal, flowS: Float64Array, blow: ForcedBlow, params: EngineParameters): GlotticStop | null {
  const stopFlow = params.glotticStopFlowLPerS;
  const tuning = DETECTOR_TUNING;
  const fromFlow = tuning.glotticFromFactor * stopFlow;
  const holdLimit = tuning.glotticHoldFactor * stopFlow;
  const minDrop = tuning.glotticMinDropFactor * stopFlow;
  const minFall = tuning.glotticMinFallFactor * stopFlow;
  const halfFall = Math.max(1, Math.round((params.glotticStopFallTimeS * sig.sampleRateHz) / 2));
  const steadySamples = Math.max(1, Math.round(tuning.glotticSteadyS * sig.sampleRateHz));
  const holdSamples = Math.max(1, Math.round(tuning.glotticHoldS * sig.sampleRateHz));
  const n = flowS.length;
  for (let s = blow.peakFlowIndex + 1; s <= blow.lastExpiratoryIndex; s++) {
    if (!(flowS[s] <= stopFlow && flowS[s - 1] > stopFlow)) continue;
    if (s - halfFall < 0 || s + halfFall >= n || flowS[s - halfFall] - flowS[s + halfFall] < minFall) continue;
    // The two means are a fall time apart, half before and half after the crossing: a closure
    // falls through both halves, a taper or a heartbeat only part of the way.
    const steadyEnd = s - halfFall;
    const steadyStart = Math.max(blow.peakFlowIndex, steadyEnd - steadySamples);
    if (steadyEnd <= steadyStart) continue;
    let steadySum = 0;
    for (let j = steadyStart; j < steadyEnd; j++) steadySum += flowS[j];
    const steadyLPerS = steadySum / (steadyEnd - steadyStart);
    if (steadyLPerS < fromFlow) continue;
    const holdStart = s + halfFall;
    const holdEnd = Math.min(n, holdStart + holdSamples);
    let held = true;
    let heldSum = 0;
    for (let j = holdStart; j < holdEnd; j++) {
      // Breathing in (negative flow) is not a closed glottis; nor is a slow tail hovering near the stop flow.
      if (Math.abs(flowS[j]) > holdLimit) {
        held = false;
        break;
      }
      heldSum += flowS[j];
    }
    if (!held) continue;
    const heldLPerS = holdEnd > holdStart ? heldSum / (holdEnd - holdStart) : flowS[s];
    if (steadyLPerS - heldLPerS < minDrop) continue;
    return { index: s, timeS: sampleTimeS(sig, s), fromFlowLPerS: steadyLPerS, toFlowLPerS: heldLPerS };
  }
  return null;
}

interface Cough {
  readonly timeS: number;
  readonly lowLPerS: number;
  readonly aroundLPerS: number;
  readonly depthFraction: number;
}

/** Local minima of smoothed flow between peak and end of expiration that recover on both sides within the window. */
function findCoughs(
  sig: DualSignal,
  flowS: Float64Array,
  blow: ForcedBlow,
  endIndex: number,
  params: EngineParameters,
  stopIndex: number,
): Cough[] {
  const w = Math.max(2, Math.round(DETECTOR_TUNING.coughRecoveryWindowS * sig.sampleRateHz));
  const stopHold = Math.round(DETECTOR_TUNING.glotticHoldS * sig.sampleRateHz) + w;
  const coughs: Cough[] = [];
  const n = flowS.length;
  const minDip = DETECTOR_TUNING.coughMinDipLPerS;
  // A dip (its low at least -stop flow) must recover to minDip above its low: past the last sample
  // that high, no minimum can be a cough, which spares the search the long quiet tail.
  const recoveryFloor = minDip - params.glotticStopFlowLPerS - 1e-9;
  let lastHigh = Math.min(n - 1, endIndex + w);
  while (lastHigh > blow.peakFlowIndex && !(flowS[lastHigh] >= recoveryFloor)) lastHigh--;
  const last = Math.min(n - 2, endIndex, lastHigh - 1);
  // Highest flow from each sample on: a minimum that nothing later rises minDip above cannot be a
  // cough, which spares the window scans over the noise of a long, slowly falling tail.
  const base = blow.peakFlowIndex + 1;
  const suffixMax = new Float64Array(Math.max(0, lastHigh - base + 1));
  for (let j = lastHigh, high = -Infinity; j >= base; j--) suffixMax[j - base] = high = Math.max(high, flowS[j]);
  for (let m = base; m <= last; m++) {
    const low = flowS[m];
    if (!(low <= flowS[m - 1] && low < flowS[m + 1])) continue;
    if (suffixMax[m + 1 - base] - low < minDip) continue;
    if (stopIndex >= 0 && m >= stopIndex && m <= stopIndex + stopHold) continue;
    // Flow reversing is a breath in, reported as such, not a cough.
    if (low < -params.glotticStopFlowLPerS) continue;
    // Recovery after the low first: on a falling flow it fails at once, and then the depth cannot reach minDip.
    let post = -Infinity;
    const postEnd = Math.min(n - 1, m + w);
    for (let j = m + 1; j <= postEnd; j++) if (flowS[j] > post) post = flowS[j];
    if (post - low < minDip) continue;
    let pre = -Infinity;
    for (let j = Math.max(0, m - w); j < m; j++) if (flowS[j] > pre) pre = flowS[j];
    const around = Math.min(pre, post);
    const depth = around - low;
    if (depth >= minDip && depth >= params.coughDipFraction * around) {
      coughs.push({ timeS: sampleTimeS(sig, m), lowLPerS: low, aroundLPerS: around, depthFraction: depth / around });
      m += w;
    }
  }
  return coughs;
}

/** Mean flow over the still stretch nearest before the blow (the pause at full inspiration, or a lead-in). */
function findZeroDrift(sig: DualSignal, flowS: Float64Array, blow: ForcedBlow): { flowLPerS: number; durationS: number } | null {
  const trim = Math.round(DETECTOR_TUNING.stillTrimS * sig.sampleRateHz);
  const minLen = Math.round(DETECTOR_TUNING.stillMinS * sig.sampleRateHz);
  const still = DETECTOR_TUNING.stillFlowLPerS;
  let end = blow.peakFlowIndex;
  while (end >= 0) {
    while (end >= 0 && Math.abs(flowS[end]) > still) end--;
    let start = end;
    while (start > 0 && Math.abs(flowS[start - 1]) <= still) start--;
    const a = start + trim;
    const b = end - trim;
    if (b - a >= minLen) {
      const durationS = (b - a) / sig.sampleRateHz;
      return { flowLPerS: (sig.volumeL[b] - sig.volumeL[a]) / durationS, durationS };
    }
    end = start - 1;
  }
  return null;
}

/** Another expiration, outside the analysed blow, with at least half its PEF and half its FVC. */
function findSecondBlow(
  sig: DualSignal,
  flowS: Float64Array,
  blow: ForcedBlow,
  metrics: EffortMetrics,
): { timeS: number; volumeL: number; peakLPerS: number } | null {
  const v = sig.volumeL;
  const k = DETECTOR_TUNING.secondBlowFraction;
  const ranges: [number, number][] = [
    [0, blow.maxInspirationIndex - 1],
    [blow.lastExpiratoryIndex + 1, v.length - 1],
  ];
  for (const [from, to] of ranges) {
    let i = from;
    while (i <= to) {
      // Negated so that a NaN flow (an overflowed signal) also moves on instead of looping for ever.
      if (!(flowS[i] > DETECTOR_TUNING.stillFlowLPerS)) {
        i++;
        continue;
      }
      const start = i;
      let peak = flowS[i];
      // The expiration lasts until the subject breathes in: an obstructed lung's slow tail (below the
      // still flow for seconds) still belongs to it.
      while (i <= to && flowS[i] > -DETECTOR_TUNING.stillFlowLPerS) peak = Math.max(peak, flowS[i++]);
      const volumeL = v[i - 1] - v[start];
      if (volumeL >= k * metrics.fvcL && peak >= k * metrics.pefLPerS) {
        return { timeS: sampleTimeS(sig, start), volumeL, peakLPerS: peak };
      }
    }
  }
  return null;
}
