import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  ErrorHandler,
  booleanAttribute,
  computed,
  inject,
  input,
  output,
  signal,
} from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { RouterLink } from '@angular/router';

import type { UploadResult } from '@shared/contracts/sessions';
import { ApiError } from '../../core/http/api-error';
import { fileSizeText } from '../session-labels';
import { SiteDeskApi, fileRejectionOf, type FileRejection } from '../site-desk-api';

/** Where one upload stands, from choosing the file to the server's verdict. */
type UploadState =
  | { readonly phase: 'idle' }
  | { readonly phase: 'sending'; readonly percent: number }
  | { readonly phase: 'checking' }
  | { readonly phase: 'checked'; readonly result: UploadResult }
  | { readonly phase: 'rejected'; readonly rejection: FileRejection; readonly message: string }
  | { readonly phase: 'failed'; readonly message: string };

let nextId = 0;

/**
 * Sends a session's one file with a progress bar, then says in words what became of it. Used on
 * the register page and on a session awaiting its file or whose last file was rejected.
 */
@Component({
  selector: 'app-session-file-upload',
  imports: [MatButton, MatIcon, MatProgressBar, RouterLink],
  templateUrl: './session-file-upload.html',
  styleUrl: './session-file-upload.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class SessionFileUpload {
  private readonly api = inject(SiteDeskApi);
  private readonly errorHandler = inject(ErrorHandler);
  private readonly destroyRef = inject(DestroyRef);

  readonly studyId = input.required<string>();
  readonly sessionId = input.required<string>();
  /** Whether to offer a link to the session after a rejection (the file is kept there). */
  readonly showSessionLink = input(false, { transform: booleanAttribute });
  /** The file was read and checked (201). */
  readonly checked = output<UploadResult>();
  /** The file was stored but could not be used (422 `file-rejected`). */
  readonly rejected = output<FileRejection>();

  protected readonly inputId = `session-file-${nextId}`;
  protected readonly hintId = `session-file-hint-${nextId++}`;
  protected readonly file = signal<File | null>(null);
  protected readonly state = signal<UploadState>({ phase: 'idle' });
  /** Whether a file is on its way or being checked. */
  protected readonly busy = computed(() => ['sending', 'checking'].includes(this.state().phase));
  protected readonly percent = computed(() => {
    const state = this.state();
    return state.phase === 'sending' ? state.percent : 100;
  });
  protected readonly fileSize = computed(() => {
    const file = this.file();
    return file ? fileSizeText(file.size) : '';
  });
  protected readonly sessionLink = computed(() => ['/site-desk', 'sessions', this.studyId(), this.sessionId()]);

  /** What the live region says: each step once, not every percent. */
  protected readonly announcement = computed(() => {
    const state = this.state();
    const name = this.file()?.name ?? 'the file';
    switch (state.phase) {
      case 'idle':
        return '';
      case 'sending':
        return `Uploading ${name}…`;
      case 'checking':
        return `${name} arrived. Reading and checking it…`;
      case 'checked': {
        const count = state.result.session.efforts.length;
        return `${name} was read and checked: ${count} ${count === 1 ? 'effort' : 'efforts'} found.`;
      }
      case 'rejected':
        return `${name} was kept, but it could not be used:`;
      case 'failed':
        return `${name} was not uploaded. ${state.message}`;
    }
  });

  protected chooseFile(event: Event): void {
    const chosen = (event.target as HTMLInputElement).files?.item(0) ?? null;
    this.file.set(chosen);
    this.state.set({ phase: 'idle' });
  }

  protected upload(): void {
    const file = this.file();
    if (!file || this.busy()) return;
    this.state.set({ phase: 'sending', percent: 0 });
    this.api
      .uploadFile(this.studyId(), this.sessionId(), file)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (progress) => {
          if (progress.kind === 'done') {
            this.state.set({ phase: 'checked', result: progress.result });
            this.checked.emit(progress.result);
            return;
          }
          const total = progress.totalBytes ?? file.size;
          const percent = total > 0 ? Math.min(100, Math.round((progress.loadedBytes * 100) / total)) : 0;
          // Every byte is out: the server now reads and checks the file.
          this.state.set(percent >= 100 ? { phase: 'checking' } : { phase: 'sending', percent });
        },
        error: (error: unknown) => this.showFailure(error),
      });
  }

  private showFailure(error: unknown): void {
    const rejection = fileRejectionOf(error);
    if (rejection) {
      this.state.set({ phase: 'rejected', rejection, message: (error as ApiError).message });
      this.rejected.emit(rejection);
      return;
    }
    if (error instanceof ApiError) {
      this.state.set({ phase: 'failed', message: error.message });
      return;
    }
    this.state.set({ phase: 'failed', message: 'Something unexpected went wrong. Try again.' });
    this.errorHandler.handleError(error);
  }
}
