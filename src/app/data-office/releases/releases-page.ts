import { ChangeDetectionStrategy, Component, DestroyRef, type OnInit, computed, inject, input, signal } from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatAnchor, MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatOption, MatSelect } from '@angular/material/select';
import { MatTableModule } from '@angular/material/table';
import { Router, RouterLink } from '@angular/router';

import { MAX_RELEASE_REASON_LENGTH, type ReleaseProgress, type ReleaseSummary } from '@shared/contracts/releases';
import { ApiError } from '../../core/http/api-error';
import { DataManagerStudies } from '../data-manager-studies';
import { DataOfficeLocksApi, needsReauthentication, reauthenticateUrl } from '../data-office-locks-api';
import { DataOfficeReleasesApi } from '../data-office-releases-api';
import { reauthenticationProblem, utcText } from '../locks/lock-request';
import { PageLeave } from '../locks/page-leave';
import { ReleaseProgressView } from './release-progress';
import { ReleaseSignature } from './release-signature';
import {
  RELEASE_STATUS_LABELS,
  RELEASES_PAGE_PATH,
  pendingFrom,
  releaseRequestOf,
  returnPathFor,
  scopeText,
  type PendingRelease,
} from './release-request';

/** A release whose build the page follows. */
interface FollowedRelease {
  readonly studyId: string;
  readonly releaseId: string;
  readonly initial: ReleaseProgress;
}

/**
 * The data manager's releases page: the study's releases with their signatures, scope, files and
 * status, and a form for a new release of locked data (whole study, or some sites and visits),
 * signed with the meaning "released". When the server asks for a fresh password entry, the page
 * sends the browser to the identity provider with the form in the return path, as the locks page
 * does, and carries on when it comes back confirmed; then it follows the build with a progress bar.
 */
@Component({
  selector: 'app-releases-page',
  imports: [
    MatAnchor,
    MatButton,
    MatFormField,
    MatHint,
    MatIcon,
    MatInput,
    MatLabel,
    MatOption,
    MatSelect,
    MatTableModule,
    ReleaseProgressView,
    ReleaseSignature,
    RouterLink,
  ],
  templateUrl: './releases-page.html',
  styleUrl: './releases-page.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReleasesPage implements OnInit {
  private readonly api = inject(DataOfficeReleasesApi);
  private readonly locksApi = inject(DataOfficeLocksApi);
  private readonly destroyRef = inject(DestroyRef);
  private readonly router = inject(Router);
  private readonly pageLeave = inject(PageLeave);

  // Query parameters (route input binding): the study, and a release coming back from re-authentication.
  readonly study = input<string | undefined>(undefined);
  readonly pending = input<string | undefined>(undefined);
  readonly site = input<string | string[] | undefined>(undefined);
  readonly visit = input<string | string[] | undefined>(undefined);
  readonly reason = input<string | undefined>(undefined);
  readonly reauthentication = input<string | undefined>(undefined);

  private readonly dataManagerStudies = new DataManagerStudies();
  protected readonly studies = this.dataManagerStudies.all;
  protected readonly currentStudy = this.dataManagerStudies.current;
  protected readonly studyId = this.dataManagerStudies.currentId;

  protected readonly releases = this.api.releasesOf(() => this.studyId());
  protected readonly sites = this.locksApi.sitesOf(() => this.studyId());
  protected readonly schedule = this.locksApi.scheduleOf(() => this.studyId());
  private readonly siteNumbers = computed(
    () => new Map((this.sites.hasValue() ? this.sites.value() : []).map((site) => [site.id, site.number] as const)),
  );

  /** Whether the new-release form is open. */
  protected readonly formOpen = signal(false);
  protected readonly formSiteIds = signal<string[]>([]);
  protected readonly formVisitCodes = signal<string[]>([]);
  protected readonly formReason = signal('');
  protected readonly formScopeText = computed(() =>
    scopeText({ siteIds: this.formSiteIds(), visitCodes: this.formVisitCodes() }, this.siteNumbers()),
  );

  /** Whether a release request is being sent. */
  protected readonly busy = signal(false);
  protected readonly problem = signal<string | null>(null);
  protected readonly followed = signal<FollowedRelease | null>(null);
  /** Whether the followed release has ended (complete, failed or interrupted). */
  protected readonly followedEnded = signal<ReleaseProgress | null>(null);

  protected readonly columns = ['release', 'requestedAt', 'signature', 'scope', 'files', 'status'];
  protected readonly maxReasonLength = MAX_RELEASE_REASON_LENGTH;
  protected readonly utcText = utcText;
  /** Whether another release of the study is still being built: the server takes one at a time. */
  protected readonly buildRunning = computed(
    () => (this.releases.hasValue() && this.releases.value().some((release) => release.status === 'running')) || (!!this.followed() && !this.followedEnded()),
  );
  protected readonly canRequest = computed(() => !this.busy() && !this.buildRunning() && 'request' in releaseRequestOf(this.form()));

  ngOnInit(): void {
    // Read once: after the query is cleared below, the form keeps what the user had entered.
    this.dataManagerStudies.choose(this.study());
    const pending = pendingFrom({ study: this.study(), pending: this.pending(), site: this.site(), visit: this.visit(), reason: this.reason() });
    if (!pending) return;
    this.formSiteIds.set([...pending.siteIds]);
    this.formVisitCodes.set([...pending.visitCodes]);
    this.formReason.set(pending.reason);
    this.formOpen.set(true);
    void this.router.navigate([RELEASES_PAGE_PATH], { queryParams: { study: pending.studyId }, replaceUrl: true });
    const problem = reauthenticationProblem(this.reauthentication());
    if (problem) this.problem.set(problem);
    // Back from a confirmed password entry: finish what was asked before leaving.
    else if (this.reauthentication() === 'confirmed') this.sign(pending);
  }

  protected chooseStudy(studyId: string): void {
    this.dataManagerStudies.choose(studyId);
    this.formSiteIds.set([]);
    this.formVisitCodes.set([]);
    this.followed.set(null);
  }

  protected openForm(): void {
    this.problem.set(null);
    this.formOpen.set(true);
  }

  protected closeForm(): void {
    this.formOpen.set(false);
    this.problem.set(null);
  }

  protected submitRelease(): void {
    const studyId = this.studyId();
    if (!studyId) return;
    this.sign({ studyId, ...this.form() });
  }

  protected scopeOf(release: ReleaseSummary): string {
    return scopeText(release.scope, this.siteNumbers());
  }

  /** The status in words; the table's rows are untyped, so the lookup is typed here. */
  protected statusOf(release: ReleaseSummary): { readonly label: string; readonly icon: string } {
    return RELEASE_STATUS_LABELS[release.status];
  }

  protected showEnded(progress: ReleaseProgress): void {
    this.followedEnded.set(progress);
    this.releases.reload();
  }

  private form() {
    return { siteIds: this.formSiteIds(), visitCodes: this.formVisitCodes(), reason: this.formReason() };
  }

  /** Sends the signed request; a request for re-authentication leaves the page with the form in the return path. */
  private sign(pending: PendingRelease): void {
    const checked = releaseRequestOf(pending);
    if ('problem' in checked) {
      this.problem.set(checked.problem);
      return;
    }
    this.busy.set(true);
    this.problem.set(null);
    this.api
      .request(pending.studyId, checked.request)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (accepted) => {
          this.busy.set(false);
          this.formOpen.set(false);
          this.formReason.set('');
          this.followedEnded.set(null);
          this.followed.set({ studyId: pending.studyId, releaseId: accepted.release.releaseId, initial: accepted.progress });
          this.releases.reload();
        },
        error: (error: unknown) => {
          this.busy.set(false);
          if (needsReauthentication(error)) {
            this.pageLeave.goTo(reauthenticateUrl(returnPathFor(pending)));
            return;
          }
          // Expected refusals (data not locked or not read, nothing in scope, a build running) are explained; anything else is unexpected.
          if (!(error instanceof ApiError)) throw error;
          this.problem.set(error.message);
        },
      });
  }
}
