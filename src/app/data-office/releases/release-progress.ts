import { ChangeDetectionStrategy, Component, InjectionToken, computed, inject, input, output, signal } from '@angular/core';
import { takeUntilDestroyed, toObservable } from '@angular/core/rxjs-interop';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { EMPTY, catchError, exhaustMap, retry, switchMap, takeWhile, throwError, timer } from 'rxjs';

import type { ReleaseProgress } from '@shared/contracts/releases';
import { ApiError } from '../../core/http/api-error';
import { DataOfficeReleasesApi } from '../data-office-releases-api';

/** How often a running release's progress is asked for. */
export const RELEASE_POLL_INTERVAL_MS = new InjectionToken<number>('RELEASE_POLL_INTERVAL_MS', { factory: () => 1000 });

/** Failed polls in a row (the server out of reach) before the bar stops asking and says so. */
const UNREACHABLE_RETRIES = 3;

/**
 * The progress bar of a release being built: asks the progress route every
 * {@link RELEASE_POLL_INTERVAL_MS} while the job runs, shows its phase and percent, and tells the
 * page once when it has ended (complete, failed or interrupted).
 */
@Component({
  selector: 'app-release-progress',
  imports: [MatIcon, MatProgressBar],
  templateUrl: './release-progress.html',
  styleUrl: './release-progress.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReleaseProgressView {
  private readonly api = inject(DataOfficeReleasesApi);
  private readonly pollIntervalMs = inject(RELEASE_POLL_INTERVAL_MS);

  readonly studyId = input.required<string>();
  readonly releaseId = input.required<string>();
  /** The progress the request answered with, shown until the first poll comes back. */
  readonly initial = input<ReleaseProgress | null>(null);
  /** The last progress, once the job is no longer running. */
  readonly settled = output<ReleaseProgress>();

  private readonly polled = signal<ReleaseProgress | null>(null);
  protected readonly progress = computed(() => this.polled() ?? this.initial());
  protected readonly problem = signal<string | null>(null);
  protected readonly elapsedSeconds = computed(() => Math.round((this.progress()?.elapsedMs ?? 0) / 100) / 10);

  constructor() {
    const job = computed(() => ({ studyId: this.studyId(), releaseId: this.releaseId() }));
    toObservable(job)
      .pipe(
        switchMap(({ studyId, releaseId }) => {
          this.polled.set(null);
          this.problem.set(null);
          // exhaustMap: a slow answer is waited for rather than cancelled by the next tick.
          return timer(0, this.pollIntervalMs).pipe(
            exhaustMap(() => this.api.progress(studyId, releaseId)),
            retry({
              count: UNREACHABLE_RETRIES,
              resetOnSuccess: true,
              delay: (error: unknown) => (error instanceof ApiError && error.status === 0 ? timer(this.pollIntervalMs) : throwError(() => error)),
            }),
            takeWhile((progress) => progress.status === 'running', true),
            catchError((error: unknown) => {
              // Expected: the release is unknown (404) or the server is out of reach; anything else is unexpected.
              if (!(error instanceof ApiError)) return throwError(() => error);
              this.problem.set(`The progress of the release could not be read: ${error.message}`);
              return EMPTY;
            }),
          );
        }),
        takeUntilDestroyed(),
      )
      .subscribe((progress) => {
        this.polled.set(progress);
        if (progress.status !== 'running') this.settled.emit(progress);
      });
  }
}
