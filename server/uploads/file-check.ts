import type { SessionCheck } from '../../shared/contracts/sessions.js';
import { analyzeRecording } from '../../shared/spirometry/effort-analysis.js';
import { SpirometryInputError, type Recording } from '../../shared/spirometry/model.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import { analyzeSession, type EffortAnalysis, type SessionAnalysis } from '../../shared/spirometry/session-analysis.js';
import { decodeSessionFile, type DecodeLimits, type DecodedSessionFile, type UploadFormat } from './session-file-decoder.js';

/** Same bound as the session JSON schema; a set has a handful of efforts (ATS/ERS 2019: usually no more than 8). */
const MAX_EFFORTS_PER_FILE = 50;

/** What the session was registered as, to compare with what the file says. */
export interface RegisteredSession {
  readonly subjectCode: string;
  readonly visitCode: string;
  readonly timepointCode: string;
  readonly bronchodilator: 'pre' | 'post';
  readonly ageYears: number;
}

export type FileCheckOutcome =
  | {
      readonly outcome: 'checked';
      readonly format: UploadFormat;
      readonly decoded: DecodedSessionFile;
      readonly analysis: SessionAnalysis;
      readonly check: SessionCheck;
    }
  | { readonly outcome: 'rejected'; readonly format: UploadFormat | null; readonly reasons: string[] };

/**
 * Decodes a stored file and runs the engine's first pass over it. Every reason a file cannot be
 * used is collected (each effort that fails is named), so that the site fixes everything at once.
 * Pure computation: no storage, no database.
 */
export function checkSessionFile(
  fileName: string,
  bytes: Uint8Array,
  registered: RegisteredSession,
  protocol: ResolvedProtocol,
  limits: Omit<DecodeLimits, 'minSampleRateHz'>,
): FileCheckOutcome {
  let decoded: DecodedSessionFile;
  try {
    decoded = decodeSessionFile(fileName, bytes, { ...limits, minSampleRateHz: protocol.engine.minSampleRateHz });
  } catch (error) {
    if (error instanceof SpirometryInputError) return { outcome: 'rejected', format: null, reasons: [error.message] };
    throw error;
  }
  const reasons = metadataMismatches(decoded, registered);
  if (decoded.recordings.length > MAX_EFFORTS_PER_FILE) {
    reasons.push(`${fileName}: ${decoded.recordings.length} efforts; one session file holds at most ${MAX_EFFORTS_PER_FILE}`);
  }
  let analysis: SessionAnalysis | undefined;
  try {
    analysis = analyzeSession(decoded.recordings, protocol, { demographics: { ageYears: registered.ageYears } });
  } catch (error) {
    if (!(error instanceof SpirometryInputError)) throw error;
    reasons.push(...effortProblems(decoded.recordings, protocol));
  }
  if (reasons.length > 0 || !analysis) return { outcome: 'rejected', format: decoded.format, reasons };
  return { outcome: 'checked', format: decoded.format, decoded, analysis, check: summarizeCheck(analysis) };
}

/** Only on the failure path: analyse each effort alone to name every one that cannot be analysed. */
function effortProblems(recordings: readonly Recording[], protocol: ResolvedProtocol): string[] {
  const problems: string[] = [];
  recordings.forEach((recording, index) => {
    try {
      analyzeRecording(recording, protocol.engine);
    } catch (error) {
      if (!(error instanceof SpirometryInputError)) throw error;
      const named = error.message.includes(recording.label) ? error.message : `${recording.label}: ${error.message}`;
      problems.push(`effort ${index + 1} (${named})`);
    }
  });
  return problems;
}

/** A file that names another subject, visit or set is the wrong file, whatever its curves look like. */
function metadataMismatches(decoded: DecodedSessionFile, registered: RegisteredSession): string[] {
  const { metadata } = decoded;
  const problems: string[] = [];
  const compare = (label: string, inFile: string | null | undefined, expected: string) => {
    if (inFile !== undefined && inFile !== null && inFile.toLowerCase() !== expected.toLowerCase()) {
      problems.push(`the file is for ${label} ${inFile}, but this session was registered for ${label} ${expected}`);
    }
  };
  compare('subject', metadata.subjectCode, registered.subjectCode);
  compare('visit', metadata.visit, registered.visitCode);
  compare('timepoint', metadata.timepoint, registered.timepointCode);
  if (metadata.bronchodilator && metadata.bronchodilator !== registered.bronchodilator) {
    problems.push(
      `the file is a ${metadata.bronchodilator}-bronchodilator set, but this session was registered as ${registered.bronchodilator}-bronchodilator`,
    );
  }
  return problems;
}

export function summarizeCheck(analysis: SessionAnalysis): SessionCheck {
  return {
    protocolId: analysis.protocol.id,
    protocolVersion: analysis.protocol.version,
    fev1Grade: analysis.fev1.grade,
    fvcGrade: analysis.fvc.grade,
    reportedFev1L: analysis.reported.fev1?.valueL ?? null,
    reportedFvcL: analysis.reported.fvc?.valueL ?? null,
    fev1FvcRatio: analysis.reported.fev1FvcRatio,
    notes: [...analysis.notes],
  };
}

/** The reasons behind each suggested verdict, in plain words. */
export function verdictReasons(effort: EffortAnalysis): { fev1: string[]; fvc: string[] } {
  return {
    fev1: effort.verdicts.fev1.failures.map((failure) => failure.message),
    fvc: effort.verdicts.fvc.failures.map((failure) => failure.message),
  };
}
