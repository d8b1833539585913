import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  computed,
  inject,
  input,
  linkedSignal,
  output,
  signal,
} from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatCheckbox } from '@angular/material/checkbox';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatOption, MatSelect } from '@angular/material/select';

import type { Query } from '@shared/contracts/reading';
import type { SessionSummary } from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { DataOfficeApi } from '../data-office-api';

/** The server's length limits of a question (shared/contracts/reading.ts). */
const MIN_QUESTION_LENGTH = 5;

/** "V3 · PRE-DOSE · pre-bronchodilator · tested 2026-11-20 · site 101": a session as the data office tells them apart. */
export function sessionChoiceLabel(session: SessionSummary): string {
  const locked = session.locked ? ' · locked' : '';
  return `${session.visitCode} · ${session.timepointCode} · ${session.bronchodilator}-bronchodilator · tested ${session.testedAt.slice(0, 10)} · site ${session.siteNumber}${locked}`;
}

/**
 * Opens a query on a session: find the subject by code, choose the session, write the question
 * and say whether the site should repeat the test.
 */
@Component({
  selector: 'app-open-query',
  imports: [MatButton, MatCheckbox, MatFormField, MatHint, MatIcon, MatInput, MatLabel, MatOption, MatSelect],
  templateUrl: './open-query.html',
  styleUrl: './open-query.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class OpenQuery {
  private readonly api = inject(DataOfficeApi);
  private readonly destroyRef = inject(DestroyRef);

  readonly studyId = input.required<string>();
  /** A subject code to look up at once (from a link). */
  readonly initialSubjectCode = input<string | undefined>(undefined);
  /** The query was opened. */
  readonly opened = output<Query>();

  protected readonly subjectCode = linkedSignal(() => this.initialSubjectCode() ?? '');
  /** The code last looked up; the session list follows it. */
  protected readonly searchedCode = linkedSignal(() => this.initialSubjectCode()?.trim() || undefined);
  protected readonly sessions = this.api.sessionsOfSubject(
    () => this.studyId(),
    () => this.searchedCode(),
  );
  protected readonly sessionList = computed<SessionSummary[]>(() => (this.sessions.hasValue() ? this.sessions.value().items : []));
  protected readonly sessionId = linkedSignal<SessionSummary[], string | null>({
    source: () => this.sessionList(),
    computation: (list) => (list.length === 1 && !list[0].locked ? list[0].id : null),
  });
  protected readonly question = signal('');
  protected readonly requestRepeat = signal(false);
  protected readonly sending = signal(false);
  protected readonly problem = signal<string | null>(null);

  protected readonly canSend = computed(
    () => !this.sending() && this.sessionId() !== null && this.question().trim().length >= MIN_QUESTION_LENGTH,
  );
  protected readonly minQuestionLength = MIN_QUESTION_LENGTH;
  protected readonly choiceLabel = sessionChoiceLabel;

  protected findSessions(): void {
    this.searchedCode.set(this.subjectCode().trim() || undefined);
  }

  protected send(): void {
    const sessionId = this.sessionId();
    if (!this.canSend() || sessionId === null) return;
    this.sending.set(true);
    this.problem.set(null);
    this.api
      .openQuery(this.studyId(), sessionId, { question: this.question().trim(), requestRepeat: this.requestRepeat() })
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (query) => {
          this.sending.set(false);
          this.question.set('');
          this.requestRepeat.set(false);
          this.opened.emit(query);
        },
        error: (error: unknown) => {
          this.sending.set(false);
          // Expected refusals (locked data, a bad question) are explained; anything else is unexpected.
          if (!(error instanceof ApiError)) throw error;
          this.problem.set(error.message);
        },
      });
  }
}
