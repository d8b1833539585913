/**
 * Test and benchmark support: the rows of final reads and of whole synthetic studies, ready for
 * {@link ReleaseFixtureRepository}. Not used by the app. Demo data only, fictional throughout.
 */
import type { ReadResult } from '../../shared/contracts/reading.js';
import type { EffortMetrics, Verdict } from '../../shared/spirometry/model.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import { summarizeRead } from '../../shared/spirometry/read-summary.js';
import { contentHash } from '../signatures/content-hash.js';
import type { FixtureRows } from './release-fixture-repository.js';

/** What a final read fixture needs of one stored effort. */
export interface StoredEffort {
  readonly id: string;
  readonly effortIndex: number;
  readonly metricsJson: string;
  readonly suggestedFev1Verdict: string;
  readonly suggestedFvcVerdict: string;
}

/** The rows of one signed final read: the engine's suggestions taken as verdicts unless overridden. */
export function finalReadRows(input: {
  readonly studyId: string;
  readonly sessionId: string;
  readonly uploadId: string;
  readonly ageYears: number;
  readonly efforts: readonly StoredEffort[];
  readonly reader: { readonly id: string; readonly name: string };
  readonly signedAt: string;
  readonly protocol: ResolvedProtocol;
  readonly readId: string;
  readonly overrides?: ReadonlyMap<number, { readonly fev1Verdict: Verdict; readonly fvcVerdict: Verdict; readonly comment?: string }>;
}): Pick<FixtureRows, 'reads' | 'verdicts' | 'signatures'> {
  const judged = input.efforts.map((effort) => {
    const override = input.overrides?.get(effort.effortIndex);
    return {
      index: effort.effortIndex,
      effortId: effort.id,
      metrics: JSON.parse(effort.metricsJson) as EffortMetrics,
      fev1Verdict: override?.fev1Verdict ?? (effort.suggestedFev1Verdict as Verdict),
      fvcVerdict: override?.fvcVerdict ?? (effort.suggestedFvcVerdict as Verdict),
      suggestedFev1Verdict: effort.suggestedFev1Verdict,
      suggestedFvcVerdict: effort.suggestedFvcVerdict,
      comment: override?.comment ?? '',
    };
  });
  const summary = summarizeRead(judged, input.protocol, input.ageYears);
  const result: ReadResult = {
    fev1Grade: summary.fev1.grade,
    fvcGrade: summary.fvc.grade,
    reportedFev1L: summary.reported.fev1?.valueL ?? null,
    reportedFvcL: summary.reported.fvc?.valueL ?? null,
    fev1FvcRatio: summary.reported.fev1FvcRatio,
    fev1EffortIndex: summary.reported.fev1?.effortIndex ?? null,
    fvcEffortIndex: summary.reported.fvc?.effortIndex ?? null,
    endpointEligible: { fev1: summary.endpoint.fev1, fvc: summary.endpoint.fvc, reasons: [...summary.endpoint.reasons] },
  };
  const verdicts = judged.map((effort) => ({
    readId: input.readId,
    effortId: effort.effortId,
    effortIndex: effort.index,
    fev1Verdict: effort.fev1Verdict,
    fvcVerdict: effort.fvcVerdict,
    suggestedFev1Verdict: effort.suggestedFev1Verdict,
    suggestedFvcVerdict: effort.suggestedFvcVerdict,
    findingsJson: '[]',
    comment: effort.comment,
  }));
  const signatureId = `${input.readId}-signature`;
  return {
    signatures: [
      {
        id: signatureId,
        userId: input.reader.id,
        printedName: input.reader.name,
        meaning: 'authored',
        signedAt: input.signedAt,
        recordType: 'read',
        recordId: input.readId,
        contentHash: contentHash({ verdicts, result }),
        authTime: input.signedAt,
        method: 'identity-provider-password-login',
      },
    ],
    reads: [
      {
        id: input.readId,
        studyId: input.studyId,
        sessionId: input.sessionId,
        uploadId: input.uploadId,
        readerId: input.reader.id,
        kind: 'first',
        blindCode: `R-${input.readId}`,
        status: 'signed',
        version: 2,
        claimedAt: input.signedAt,
        dueAt: input.signedAt,
        updatedAt: input.signedAt,
        resultJson: JSON.stringify(result),
        signatureId,
        signedAt: input.signedAt,
      },
    ],
    verdicts,
  };
}

/** The shape of a synthetic study for the release benchmark. */
export interface SyntheticStudySpec {
  readonly studyId: string;
  readonly studyCode: string;
  readonly efforts: number;
  readonly effortsPerSession: number;
  readonly sites: number;
  readonly subjectsPerSite: number;
  /** Users that exist already: who registers, reads, signs and locks. */
  readonly registeredBy: string;
  readonly reader: { readonly id: string; readonly name: string };
  readonly lockedBy: string;
  /** Sessions per yielded batch. */
  readonly sessionsPerBatch: number;
}

const VISITS = ['V1', 'V2', 'V3', 'V4', 'V5'];
const TIMEPOINTS = ['PRE-DOSE', 'POST-2H'];
const ZONES = ['Europe/Oslo', 'Europe/Madrid', 'America/Toronto', 'Africa/Johannesburg'];
const FINDINGS = [[], [], [], ['hesitation'], ['cough-first-second'], ['early-termination', 'no-plateau']];

/**
 * A locked study with every session finally read, `spec.efforts` efforts in all, in batches of
 * rows (the first batch holds the study, schedule, sites and subjects). Deterministic.
 */
export function* syntheticLockedStudy(spec: SyntheticStudySpec): Generator<FixtureRows> {
  const { studyId } = spec;
  const sessionCount = Math.ceil(spec.efforts / spec.effortsPerSession);
  const slots = VISITS.length * TIMEPOINTS.length * 2;
  const subjectCount = spec.sites * spec.subjectsPerSite;
  if (subjectCount * slots < sessionCount) throw new RangeError(`${subjectCount} subjects cannot hold ${sessionCount} sessions`);
  const base = Date.parse('2026-01-05T08:00:00Z');
  const iso = (ms: number) => new Date(ms).toISOString();
  const siteId = (s: number) => `${studyId}-site-${s}`;
  const subjectId = (n: number) => `${studyId}-subject-${n}`;
  yield {
    studies: [
      {
        id: studyId,
        code: spec.studyCode,
        title: 'Synthetic study for the release benchmark (fictional)',
        sponsor: 'Fictional sponsor',
        indication: 'Moderate chronic obstructive pulmonary disease',
        protocolRuleSetId: 'ats-ers-2019',
      },
    ],
    sites: Array.from({ length: spec.sites }, (_unused, s) => ({
      id: siteId(s),
      studyId,
      number: String(100 + s),
      name: `Site ${100 + s}`,
      countryCode: 'NO',
      timeZone: ZONES[s % ZONES.length],
    })),
    visits: VISITS.map((code, index) => ({
      id: `${studyId}-visit-${code}`,
      studyId,
      code,
      name: `Visit ${index + 1}`,
      ordinal: index + 1,
      dayOffset: index * 28,
      windowBeforeDays: 3,
      windowAfterDays: 3,
    })),
    timepoints: TIMEPOINTS.map((code, index) => ({ id: `${studyId}-timepoint-${code}`, studyId, code, name: code === 'PRE-DOSE' ? 'Pre-dose' : '2 h post-dose', ordinal: index + 1 })),
    subjects: Array.from({ length: subjectCount }, (_unused, n) => ({
      id: subjectId(n),
      studyId,
      siteId: siteId(n % spec.sites),
      code: `${100 + (n % spec.sites)}-${String(n).padStart(5, '0')}`,
      createdAt: iso(base),
    })),
    locks: [{ id: `${studyId}-lock`, studyId, scope: 'study', scopeId: studyId, reason: 'Database lock for the benchmark', lockedBy: spec.lockedBy, lockedAt: iso(base + 400 * 86_400_000) }],
  };
  let effortsLeft = spec.efforts;
  for (let first = 0; first < sessionCount; first += spec.sessionsPerBatch) {
    const rows = {
      sessions: [] as NonNullable<FixtureRows['sessions']>,
      uploads: [] as NonNullable<FixtureRows['uploads']>,
      efforts: [] as NonNullable<FixtureRows['efforts']>,
      signatures: [] as NonNullable<FixtureRows['signatures']>,
      reads: [] as NonNullable<FixtureRows['reads']>,
      verdicts: [] as NonNullable<FixtureRows['verdicts']>,
    };
    for (let n = first; n < Math.min(sessionCount, first + spec.sessionsPerBatch); n++) {
      const subject = n % subjectCount;
      const slot = Math.floor(n / subjectCount);
      const visit = VISITS[Math.floor(slot / 4)];
      const timepoint = TIMEPOINTS[Math.floor(slot / 2) % 2];
      const bronchodilator = slot % 2 === 0 ? 'pre' : 'post';
      const sessionId = `${studyId}-session-${n}`;
      const uploadId = `${sessionId}-upload`;
      const readId = `${sessionId}-read`;
      const testedAt = iso(base + Math.floor(slot / 4) * 28 * 86_400_000 + (slot % 4) * 3_600_000 + (n % 97) * 60_000);
      const signedAt = iso(Date.parse(testedAt) + 2 * 86_400_000);
      const effortCount = Math.min(spec.effortsPerSession, effortsLeft);
      effortsLeft -= effortCount;
      rows.sessions.push({
        id: sessionId,
        studyId,
        siteId: siteId(subject % spec.sites),
        subjectId: subjectId(subject),
        visitId: `${studyId}-visit-${visit}`,
        timepointId: `${studyId}-timepoint-${timepoint}`,
        bronchodilator,
        testedAt,
        timeZone: ZONES[(subject % spec.sites) % ZONES.length],
        ageYears: 40 + (subject % 35),
        heightCm: 155 + (subject % 40),
        weightKg: 60 + (subject % 45),
        sex: subject % 2 === 0 ? 'female' : 'male',
        technicianCode: `TECH-${subject % 9}`,
        deviceManufacturer: 'Fictional devices',
        deviceModel: 'Model S',
        deviceSerialNumber: `SN-${subject % spec.sites}`,
        status: 'final',
        fev1Grade: 'A',
        fvcGrade: 'A',
        currentUploadId: uploadId,
        registeredBy: spec.registeredBy,
        registeredAt: testedAt,
        updatedAt: signedAt,
      });
      rows.uploads.push({
        id: uploadId,
        studyId,
        sessionId,
        objectKey: `bench/${uploadId}`,
        sha256: n.toString(16).padStart(64, '0'),
        sizeBytes: 40_000,
        originalName: `${sessionId}.json`,
        contentType: 'application/json',
        detectedFormat: 'tidemark-session-json',
        uploadedBy: spec.registeredBy,
        receivedAt: testedAt,
        outcome: 'checked',
        processedAt: testedAt,
      });
      let best = { fev1: -1, fvc: -1, fev1Index: 0, fvcIndex: 0 };
      for (let e = 0; e < effortCount; e++) {
        const effortId = `${uploadId}-effort-${e}`;
        const fvcL = round3(2.4 + (subject % 23) * 0.07 + e * 0.013);
        const fev1L = round3(fvcL * (0.62 + (n % 13) * 0.01));
        const verdict: Verdict = (n + e) % 11 === 0 ? 'not_acceptable' : (n + e) % 7 === 0 ? 'usable' : 'acceptable';
        if (verdict !== 'not_acceptable' && fev1L > best.fev1) best = { ...best, fev1: fev1L, fev1Index: e };
        if (verdict !== 'not_acceptable' && fvcL > best.fvc) best = { ...best, fvc: fvcL, fvcIndex: e };
        const metrics = syntheticMetrics(fev1L, fvcL, n + e);
        rows.efforts.push({
          id: effortId,
          sessionId,
          uploadId,
          effortIndex: e,
          label: `Trial ${e + 1}`,
          signal: 'volume',
          sampleRateHz: 100,
          sampleCount: 1550,
          fev1L,
          fvcL,
          pefLPerS: metrics.pefLPerS,
          suggestedFev1Verdict: verdict,
          suggestedFvcVerdict: verdict,
          metricsJson: JSON.stringify(metrics),
          findingsJson: JSON.stringify(FINDINGS[(n + e) % FINDINGS.length].map((code) => ({ code, values: { limit: 0.15 } }))),
          verdictReasonsJson: '{"fev1":[],"fvc":[]}',
        });
        rows.verdicts.push({
          readId,
          effortId,
          effortIndex: e,
          fev1Verdict: verdict,
          fvcVerdict: (n + e) % 17 === 0 ? 'usable' : verdict,
          suggestedFev1Verdict: verdict,
          suggestedFvcVerdict: verdict,
          findingsJson: '[]',
          comment: (n + e) % 29 === 0 ? 'Cough in the first second, "late" start' : '',
        });
      }
      const result: ReadResult = {
        fev1Grade: 'A',
        fvcGrade: n % 5 === 0 ? 'B' : 'A',
        reportedFev1L: best.fev1 < 0 ? null : best.fev1,
        reportedFvcL: best.fvc < 0 ? null : best.fvc,
        fev1FvcRatio: best.fev1 < 0 || best.fvc < 0 ? null : best.fev1 / best.fvc,
        fev1EffortIndex: best.fev1 < 0 ? null : best.fev1Index,
        fvcEffortIndex: best.fvc < 0 ? null : best.fvcIndex,
        endpointEligible: { fev1: best.fev1 >= 0, fvc: best.fvc >= 0, reasons: [] },
      };
      rows.signatures.push({
        id: `${readId}-signature`,
        userId: spec.reader.id,
        printedName: spec.reader.name,
        meaning: 'authored',
        signedAt,
        recordType: 'read',
        recordId: readId,
        contentHash: contentHash(result),
        authTime: signedAt,
        method: 'identity-provider-password-login',
      });
      rows.reads.push({
        id: readId,
        studyId,
        sessionId,
        uploadId,
        readerId: spec.reader.id,
        kind: 'first',
        blindCode: `R-${readId}`,
        status: 'signed',
        version: 3,
        claimedAt: signedAt,
        dueAt: signedAt,
        updatedAt: signedAt,
        resultJson: JSON.stringify(result),
        signatureId: `${readId}-signature`,
        signedAt,
      });
    }
    yield rows;
  }
}

function round3(value: number): number {
  return Math.round(value * 1000) / 1000;
}

/** Engine metrics of the size and shape the engine stores. */
function syntheticMetrics(fev1L: number, fvcL: number, seed: number) {
  return {
    timeZeroS: 0.512,
    bevL: round3(0.04 + (seed % 9) * 0.01),
    hesitationTimeS: 0.41,
    fev075L: round3(fev1L * 0.9),
    fev1L,
    fev6L: round3(fvcL * 0.98),
    fvcL,
    pefLPerS: Math.round((5.2 + (seed % 17) * 0.11) * 100) / 100,
    timeToPefS: 0.09,
    fef25LPerS: 4.8,
    fef50LPerS: 3.1,
    fef75LPerS: 1.2,
    fef2575LPerS: Math.round((2.1 + (seed % 19) * 0.05) * 100) / 100,
    fetS: Math.round((6.5 + (seed % 23) * 0.2) * 100) / 100,
    fivcL: null,
    endOfTest: { reached: true, plateau: true, durationS: 1.2, volumeChangeL: 0.012 },
    maxInspirationIndex: 40,
    peakFlowIndex: 62,
    endOfExpirationIndex: 1490,
  };
}
