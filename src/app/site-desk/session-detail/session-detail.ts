import { DecimalPipe, PercentPipe } from '@angular/common';
import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  computed,
  inject,
  input,
  linkedSignal,
  signal,
} from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { RouterLink } from '@angular/router';

import type { SessionDetail, Upload, UploadResult } from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { CautionNote } from '../../ui/caution-note/caution-note';
import { EffortCurves } from '../../ui/effort-curves/effort-curves';
import { EffortTable } from '../effort-table/effort-table';
import { BRONCHODILATOR_LABELS, ETHNICITY_LABELS, gradeText } from '../session-labels';
import { SessionFeedback } from '../session-feedback/session-feedback';
import { SessionFileUpload } from '../session-file-upload/session-file-upload';
import { SessionQueries } from '../session-queries/session-queries';
import { SessionStatusChip } from '../session-status-chip/session-status-chip';
import { SiteDeskApi, fileRejectionOf } from '../site-desk-api';
import { UploadHistory } from '../upload-history/upload-history';
import { ZonedTimePipe } from '../zoned-time-pipe';

/** A problem with processing a file again, in words, with the reasons when the file was refused. */
interface ReprocessProblem {
  readonly message: string;
  readonly reasons: readonly string[];
}

/**
 * One session for its site: queries from the study team, the over-read feedback once final,
 * registration, the engine's checks and curves, and the files received.
 */
@Component({
  selector: 'app-session-detail',
  imports: [
    DecimalPipe,
    PercentPipe,
    MatIcon,
    MatProgressBar,
    RouterLink,
    CautionNote,
    EffortCurves,
    EffortTable,
    SessionFeedback,
    SessionFileUpload,
    SessionQueries,
    SessionStatusChip,
    UploadHistory,
    ZonedTimePipe,
  ],
  templateUrl: './session-detail.html',
  styleUrl: './session-detail.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SessionDetailPage {
  private readonly api = inject(SiteDeskApi);
  private readonly destroyRef = inject(DestroyRef);

  /** From the route `sessions/:studyId/:sessionId`. */
  readonly studyId = input.required<string>();
  readonly sessionId = input.required<string>();

  protected readonly session = this.api.sessionDetail(
    () => this.studyId(),
    () => this.sessionId(),
  );
  protected readonly detail = computed<SessionDetail | undefined>(() =>
    this.session.hasValue() ? this.session.value() : undefined,
  );
  private readonly hasEfforts = computed(() => (this.detail()?.efforts.length ?? 0) > 0);
  protected readonly curves = this.api.sessionCurves(
    () => (this.hasEfforts() ? this.studyId() : undefined),
    () => this.sessionId(),
  );
  private readonly schedule = this.api.scheduleOf(() => this.studyId());

  /** The effort drawn on top: the first one, until the coordinator chooses another. */
  protected readonly highlightedIndex = linkedSignal<readonly number[], number | null>({
    source: () => this.detail()?.efforts.map((effort) => effort.index) ?? [],
    computation: (indices, previous) =>
      previous?.value !== null && previous?.value !== undefined && indices.includes(previous.value)
        ? previous.value
        : (indices[0] ?? null),
  });

  /** Whether a new file may be sent: the session waits for one or its last one was rejected. */
  protected readonly acceptsFile = computed(() => {
    const detail = this.detail();
    return !!detail && !detail.locked && (detail.status === 'awaiting-file' || detail.status === 'rejected');
  });
  protected readonly loadError = computed(() => {
    const error = this.session.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'This session could not be read. Reload the page to try again.';
  });

  protected readonly reprocessingId = signal<string | null>(null);
  protected readonly reprocessProblem = signal<ReprocessProblem | null>(null);

  protected readonly bronchodilatorLabels = BRONCHODILATOR_LABELS;
  protected readonly ethnicityLabels = ETHNICITY_LABELS;
  protected readonly gradeText = gradeText;

  protected visitName(code: string): string {
    const visits = this.schedule.hasValue() ? this.schedule.value().visits : [];
    const name = visits.find((visit) => visit.code === code)?.name;
    return name ? `${name} (${code})` : code;
  }

  protected timepointName(code: string): string {
    const timepoints = this.schedule.hasValue() ? this.schedule.value().timepoints : [];
    const name = timepoints.find((timepoint) => timepoint.code === code)?.name;
    return name ? `${name} (${code})` : code;
  }

  protected showUploaded(result: UploadResult): void {
    this.session.set(result.session);
    this.curves.reload();
  }

  /** The file was kept but refused: the session now lists it with its reasons. */
  protected showRejected(): void {
    this.session.reload();
  }

  protected reprocess(upload: Upload): void {
    this.reprocessingId.set(upload.id);
    this.reprocessProblem.set(null);
    this.api
      .reprocessUpload(this.studyId(), upload.sessionId, upload.id)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (result) => {
          this.reprocessingId.set(null);
          this.showUploaded(result);
        },
        error: (error: unknown) => {
          this.reprocessingId.set(null);
          // ApiError: refused again (422) or not allowed now (409); anything else is unexpected.
          if (!(error instanceof ApiError)) throw error;
          this.reprocessProblem.set({ message: error.message, reasons: fileRejectionOf(error)?.reasons ?? [] });
          this.session.reload();
        },
      });
  }
}
