import { DecimalPipe, PercentPipe } from '@angular/common';
import { ChangeDetectionStrategy, Component, booleanAttribute, computed, inject, input } from '@angular/core';
import { MatAnchor } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';

import type { SiteFeedback } from '@shared/contracts/reading';
import { ApiError } from '../../core/http/api-error';
import { VERDICT_LABELS, gradeText } from '../session-labels';
import { SiteDeskApi } from '../site-desk-api';
import { ZonedTimePipe } from '../zoned-time-pipe';

/**
 * The final over-read as the site receives it: grades, reported values, what to coach next time
 * (for the session and per effort), the signature, the caution, and the PDF report to download.
 */
@Component({
  selector: 'app-session-feedback',
  imports: [DecimalPipe, PercentPipe, MatAnchor, MatIcon, MatProgressBar, ZonedTimePipe],
  templateUrl: './session-feedback.html',
  styleUrl: './session-feedback.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SessionFeedback {
  private readonly api = inject(SiteDeskApi);

  readonly studyId = input.required<string>();
  readonly sessionId = input.required<string>();
  /** Whether the session's over-read is final; before that there is no feedback to ask for. */
  readonly final = input(false, { transform: booleanAttribute });
  /** The site's zone, for the release time. */
  readonly timeZone = input.required<string>();

  private readonly resource = this.api.sessionFeedback(
    () => (this.final() ? this.studyId() : undefined),
    () => this.sessionId(),
  );
  protected readonly feedback = computed<SiteFeedback | undefined>(() => (this.resource.hasValue() ? this.resource.value() : undefined));
  protected readonly loadError = computed(() => {
    const error = this.resource.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'The feedback could not be read. Reload the page to try again.';
  });
  protected readonly pdfUrl = computed(() => this.api.feedbackPdfUrl(this.studyId(), this.sessionId()));

  protected readonly verdictLabels = VERDICT_LABELS;
  protected readonly gradeText = gradeText;

  /** "Effort 2": the label of the effort a reported value came from. */
  protected effortLabel(feedback: SiteFeedback, index: number | null): string {
    if (index === null) return '';
    return feedback.efforts.find((effort) => effort.index === index)?.label ?? `Effort ${index + 1}`;
  }
}
