import type { Logger } from 'pino';
import {
  readResultSchema,
  type ReadResult,
  type SignatureManifestation,
  type SiteFeedback,
} from '../../shared/contracts/reading.js';
import type { SessionCurves } from '../../shared/contracts/sessions.js';
import type { EffortMetrics, Verdict } from '../../shared/spirometry/model.js';
import type { ResolvedProtocol } from '../../shared/spirometry/protocol.js';
import { summarizeRead } from '../../shared/spirometry/read-summary.js';
import { AppError } from '../http/app-error.js';
import type { SiteScope } from '../http/access.js';
import type { MessageService } from '../messages/message-service.js';
import type { SiteContactRepository } from '../queries/site-contact-repository.js';
import { pickFinalRead } from '../reading/read-comparison.js';
import type { EffortRow, SessionRepository } from '../sessions/session-repository.js';
import type { SessionService } from '../sessions/session-service.js';
import { describeSession } from '../sessions/session-views.js';
import type { StudyRepository } from '../studies/study-repository.js';
import type { UploadService } from '../uploads/upload-service.js';
import { coachingForEffort, coachingForSession } from './coaching-text.js';
import type { FeedbackReadRow, FeedbackRepository, FeedbackVerdictRow } from './feedback-repository.js';
import { renderFeedbackPdf, type FeedbackReport } from './feedback-pdf.js';

/** The caution that goes with every over-read result shown to a site. */
export const FEEDBACK_CAUTION =
  'These results support, and do not replace, review by qualified staff; the protocol, local regulations and licensed practice prevail.';

/** How the signer of the final read is named to a site: who read is a matter of study blinding. */
export const SITE_SIGNER_LABEL = 'Central over-reader';

/** Who receives the feedback: the site (signer unnamed) or the study team (data manager, monitor: named). */
export type FeedbackAudience = 'site' | 'study';

/** What the reads service lends the feedback: the final read's signature with its content check. */
export interface FeedbackHooks {
  /**
   * The signature of a read as shown with it, `valid` checked against the read's current content.
   * Without it, the stored signature is shown and taken as valid when it belongs to the read.
   */
  readonly signatureOf?: (readId: string) => SignatureManifestation | undefined;
}

/**
 * Feedback to the site from the final over-read: plain-words coaching per effort and for the
 * session, grades and reported values, the signature and the caution; as JSON, as a PDF report,
 * and by e-mail when the read becomes final.
 */
export class FeedbackService {
  constructor(
    private readonly repository: FeedbackRepository,
    private readonly sessions: SessionRepository,
    private readonly sessionService: SessionService,
    private readonly studies: StudyRepository,
    private readonly uploads: UploadService,
    private readonly contacts: SiteContactRepository,
    private readonly messages: MessageService,
    private readonly protocolFor: (ruleSetId: string) => ResolvedProtocol,
    private readonly logger: Logger,
    private readonly hooks: FeedbackHooks = {},
  ) {}

  /** The read whose result the site gets: the latest signed adjudication read if any, else the earliest signed read. */
  finalReadOf(sessionId: string): FeedbackReadRow | undefined {
    return pickFinalRead(this.repository.signedReadsOf(sessionId));
  }

  /** The feedback of a session inside the caller's sites; 404 until its read is final. */
  forSession(studyId: string, sessionId: string, scope: SiteScope, audience: FeedbackAudience): SiteFeedback {
    this.sessionService.requireSession(studyId, sessionId, scope);
    return this.buildSiteFeedback(sessionId, audience);
  }

  /** Builds the feedback from the final read; 404 while the session is not final. */
  buildSiteFeedback(sessionId: string, audience: FeedbackAudience = 'site'): SiteFeedback {
    const session = this.sessions.findSessionById(sessionId);
    const read = session?.status === 'final' ? this.finalReadOf(sessionId) : undefined;
    if (!session || !read) {
      throw AppError.notFound('The over-read of this session is not final yet; its feedback appears here once it is signed.');
    }
    const verdicts = new Map(this.repository.verdictsOf(read.id).map((verdict) => [verdict.effortIndex, verdict]));
    const efforts = this.sessions.effortsOf(read.uploadId);
    const result = this.resultOf(read, efforts, verdicts, session.studyId, session.ageYears);
    const signature = this.signatureOf(read);
    return {
      sessionId,
      releasedAt: session.feedbackReleasedAt ?? read.signedAt ?? signature.signedAt,
      result,
      feedbackText: read.feedbackText,
      sessionCoaching: coachingForSession(result),
      efforts: efforts.map((effort) => {
        const verdict = verdicts.get(effort.effortIndex);
        const fev1Verdict = (verdict?.fev1Verdict ?? effort.suggestedFev1Verdict) as Verdict;
        const fvcVerdict = (verdict?.fvcVerdict ?? effort.suggestedFvcVerdict) as Verdict;
        const findings = verdict ? (JSON.parse(verdict.findingsJson) as string[]) : engineFindingCodes(effort);
        return {
          index: effort.effortIndex,
          label: effort.label,
          fev1Verdict,
          fvcVerdict,
          coaching: coachingForEffort(findings, fev1Verdict, fvcVerdict),
          comment: verdict?.comment ?? '',
        };
      }),
      signature: audience === 'site' ? { ...signature, printedName: SITE_SIGNER_LABEL } : signature,
      caution: FEEDBACK_CAUTION,
    };
  }

  /** The feedback as a PDF report, with the session's curves drawn from the stored original. */
  async pdf(studyId: string, sessionId: string, scope: SiteScope, audience: FeedbackAudience): Promise<{ fileName: string; bytes: Buffer }> {
    const feedback = this.forSession(studyId, sessionId, scope, audience);
    const row = this.sessions.sessionWithCodes(sessionId)!;
    const study = this.studies.findStudy(studyId)!;
    // Storage being down must not withhold the report: it is drawn without curves and says so.
    const curves = await this.uploads.curves(studyId, sessionId, { allSites: true }).catch((error: unknown): SessionCurves | null => {
      this.logger.warn({ err: error, sessionId }, 'curves for the feedback report could not be computed');
      return null;
    });
    const report: FeedbackReport = {
      feedback,
      studyCode: study.code,
      siteNumber: row.siteNumber,
      subjectCode: row.subjectCode,
      visitCode: row.visitCode,
      timepointCode: row.timepointCode,
      bronchodilator: row.session.bronchodilator,
      testedAt: row.session.testedAt,
      timeZone: row.session.timeZone,
      curves,
    };
    const fileName = `feedback-${row.subjectCode}-${row.visitCode}-${row.timepointCode}-${row.session.bronchodilator}.pdf`.replace(
      /[^\w.-]+/g,
      '_',
    );
    return { fileName, bytes: await renderFeedbackPdf(report) };
  }

  /**
   * Tells the site's coordinators that the feedback of a session is ready. Called by the reads
   * service once the session's read is final (after its transaction committed).
   */
  onFinal(sessionId: string): void {
    const row = this.sessions.sessionWithCodes(sessionId);
    if (!row) return;
    const { session } = row;
    for (const userId of this.contacts.coordinatorIdsOf(session.studyId, session.siteId)) {
      this.messages.notify(userId, {
        subject: `Over-read feedback ready: ${describeSession(row)}`,
        body:
          `The central over-read of ${describeSession(row)} is final. Its grades, reported values and coaching for ` +
          `each effort are in the site desk, with a PDF report to download.\n\n${FEEDBACK_CAUTION}`,
        link: `/site-desk/sessions/${session.studyId}/${session.id}`,
      });
    }
  }

  /** The result stored at signing; recomputed from the verdicts by the shared engine if absent. */
  private resultOf(
    read: FeedbackReadRow,
    efforts: readonly EffortRow[],
    verdicts: ReadonlyMap<number, FeedbackVerdictRow>,
    studyId: string,
    ageYears: number,
  ): ReadResult {
    const stored = read.resultJson ? readResultSchema.safeParse(JSON.parse(read.resultJson)) : undefined;
    if (stored?.success) return stored.data;
    const study = this.studies.findStudy(studyId)!;
    const protocol = this.protocolFor(study.protocolVersion ? `${study.protocolRuleSetId}@${study.protocolVersion}` : study.protocolRuleSetId);
    const summary = summarizeRead(
      efforts.map((effort) => ({
        index: effort.effortIndex,
        metrics: JSON.parse(effort.metricsJson) as EffortMetrics,
        fev1Verdict: (verdicts.get(effort.effortIndex)?.fev1Verdict ?? effort.suggestedFev1Verdict) as Verdict,
        fvcVerdict: (verdicts.get(effort.effortIndex)?.fvcVerdict ?? effort.suggestedFvcVerdict) as Verdict,
      })),
      protocol,
      ageYears,
    );
    return {
      fev1Grade: summary.fev1.grade,
      fvcGrade: summary.fvc.grade,
      reportedFev1L: summary.reported.fev1?.valueL ?? null,
      reportedFvcL: summary.reported.fvc?.valueL ?? null,
      fev1FvcRatio: summary.reported.fev1FvcRatio,
      fev1EffortIndex: summary.reported.fev1?.effortIndex ?? null,
      fvcEffortIndex: summary.reported.fvc?.effortIndex ?? null,
      endpointEligible: { fev1: summary.endpoint.fev1, fvc: summary.endpoint.fvc, reasons: [...summary.endpoint.reasons] },
    };
  }

  private signatureOf(read: FeedbackReadRow): SignatureManifestation {
    const lent = this.hooks.signatureOf?.(read.id);
    if (lent) return lent;
    const row = read.signatureId ? this.repository.findSignature(read.signatureId) : undefined;
    if (!row) {
      return { printedName: 'Unknown signer', meaning: 'authored', signedAt: read.signedAt ?? read.updatedAt, valid: false };
    }
    return { printedName: row.printedName, meaning: row.meaning, signedAt: row.signedAt, valid: row.recordType === 'read' && row.recordId === read.id };
  }
}

function engineFindingCodes(effort: EffortRow): string[] {
  return (JSON.parse(effort.findingsJson) as { code: string }[]).map((finding) => finding.code);
}
