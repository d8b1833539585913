import {
  ChangeDetectionStrategy,
  Component,
  DestroyRef,
  booleanAttribute,
  computed,
  effect,
  inject,
  input,
  linkedSignal,
  signal,
  untracked,
  viewChild,
} from '@angular/core';
import { takeUntilDestroyed } from '@angular/core/rxjs-interop';
import { MatButton } from '@angular/material/button';
import { MatFormField, MatHint, MatLabel } from '@angular/material/form-field';
import { MatIcon } from '@angular/material/icon';
import { MatInput } from '@angular/material/input';
import { MatProgressBar } from '@angular/material/progress-bar';
import { Router } from '@angular/router';
import { map, of, switchMap, type Observable } from 'rxjs';

import type { EffortVerdict, ReadWorkspace } from '@shared/contracts/reading';
import { AuthSession } from '../../core/auth/auth-session';
import { ApiError } from '../../core/http/api-error';
import { CautionNote } from '../../ui/caution-note/caution-note';
import { EffortCurves } from '../../ui/effort-curves/effort-curves';
import { EffortMetricsTable } from '../effort-metrics-table/effort-metrics-table';
import { EffortVerdictPanel } from '../effort-verdict-panel/effort-verdict-panel';
import { liveResultOf, metricOf, protocolOf, type LiveResult } from '../live-result';
import { ReadComparison, type ComparedReads } from '../read-comparison/read-comparison';
import { ReadPrompts } from '../read-dialogs/read-prompts';
import { draftChanged, draftOf, overrideCount, saveBodyOf, updateEffort, withVerdict, type ReadDraft } from '../read-draft';
import { MEASURE_LABELS, READ_KIND_LABELS, READ_STATUS_LABELS, VERDICT_LABELS, blindContextText, utcSecondsText, utcText, type Measure, type Verdict } from '../read-labels';
import { ReadQueries } from '../read-queries/read-queries';
import { READ_SHORTCUTS, focusPlaceOf, readActionFor, type ReadAction } from '../read-shortcuts';
import { ReadResultPanel } from '../read-result-panel/read-result-panel';
import { ReadingApi, needsReauthentication, reauthenticateUrl, staleReadOf, type StaleRead } from '../reading-api';
import { SignatureManifestationView } from '../signature-manifestation/signature-manifestation';

/**
 * The workspace of one read, shared by the reading room and adjudication: curves and metrics of
 * every effort, the reader's verdicts on the selected effort, the session result recomputed live
 * by the shared engine, feedback for the site, save / release / sign, and queries. With a
 * comparison (adjudication) the two earlier reads are shown side by side above.
 */
@Component({
  selector: 'app-read-workspace',
  imports: [
    MatButton,
    MatIcon,
    MatProgressBar,
    MatFormField,
    MatLabel,
    MatHint,
    MatInput,
    CautionNote,
    EffortCurves,
    EffortMetricsTable,
    EffortVerdictPanel,
    ReadComparison,
    ReadQueries,
    ReadResultPanel,
    SignatureManifestationView,
  ],
  templateUrl: './read-workspace.html',
  styleUrl: './read-workspace.scss',
  host: { '(document:keydown)': 'runShortcut($event)', '(window:beforeunload)': 'holdUnsavedDraft($event)' },
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReadWorkspaceView {
  private readonly api = inject(ReadingApi);
  private readonly prompts = inject(ReadPrompts);
  private readonly router = inject(Router);
  private readonly authSession = inject(AuthSession);
  private readonly destroyRef = inject(DestroyRef);

  readonly studyId = input.required<string>();
  readonly readId = input.required<string>();
  /** Whether to open the signature dialog once the read is loaded (back from a fresh sign-in). */
  readonly signRequested = input(false, { transform: booleanAttribute });
  /** The two earlier reads, for an adjudication read. */
  readonly comparison = input<ComparedReads | null>(null);
  /** Where to go once the read is released. */
  readonly homeLink = input.required<string>();

  private readonly curvesView = viewChild(EffortCurves);

  protected readonly workspaceResource = this.api.workspace(
    () => this.studyId(),
    () => this.readId(),
  );
  protected readonly workspace = computed(() => (this.workspaceResource.hasValue() ? this.workspaceResource.value() : undefined));
  protected readonly curves = this.api.curves(
    () => this.studyId(),
    () => this.readId(),
  );
  private readonly catalogueResource = this.api.findingCatalogue();
  protected readonly catalogue = computed(() => (this.catalogueResource.hasValue() ? this.catalogueResource.value() : []));

  /** What the reader has on screen; starts again from the server's copy whenever that changes. */
  protected readonly draft = linkedSignal<ReadWorkspace | undefined, ReadDraft | null>({
    source: this.workspace,
    computation: (workspace) => (workspace ? draftOf(workspace) : null),
  });
  /** The effort in the verdict panel and on top of the curves: the first, until the reader moves. */
  protected readonly selectedIndex = linkedSignal<readonly number[], number | null>({
    source: () => this.workspace()?.efforts.map((effort) => effort.index) ?? [],
    computation: (indices, previous) =>
      previous?.value !== null && previous?.value !== undefined && indices.includes(previous.value) ? previous.value : (indices[0] ?? null),
  });
  protected readonly selectedEffort = computed(() => this.workspace()?.efforts.find((effort) => effort.index === this.selectedIndex()));
  protected readonly selectedVerdict = computed(() => this.draft()?.verdicts.find((verdict) => verdict.effortIndex === this.selectedIndex()));
  protected readonly selectedPosition = computed(() => {
    const efforts = this.workspace()?.efforts ?? [];
    return { at: efforts.findIndex((effort) => effort.index === this.selectedIndex()) + 1, of: efforts.length };
  });
  protected readonly selectedFetS = computed(() => {
    const effort = this.selectedEffort();
    return effort ? metricOf(effort, 'fetS') : null;
  });

  private readonly protocol = computed(() => {
    const workspace = this.workspace();
    return workspace ? protocolOf(workspace.protocolRuleSet) : null;
  });
  protected readonly live = computed<LiveResult | null>(() => {
    const workspace = this.workspace();
    const draft = this.draft();
    const protocol = this.protocol();
    return workspace && draft && protocol ? liveResultOf(workspace.efforts, draft.verdicts, protocol, workspace.ageYears) : null;
  });
  /** Whether the draft holds changes the server does not have yet. */
  protected readonly dirty = computed(() => {
    const workspace = this.workspace();
    const draft = this.draft();
    return !!workspace && !!draft && draftChanged(workspace, draft);
  });
  protected readonly overrides = computed(() => {
    const draft = this.draft();
    return draft ? overrideCount(this.workspace()?.efforts ?? [], draft) : 0;
  });
  /** Whether the read may still change: in progress, and no write under way. */
  protected readonly editable = computed(() => this.workspace()?.status === 'in-progress');
  protected readonly busy = signal<'saving' | 'signing' | 'releasing' | null>(null);
  protected readonly loadError = computed(() => {
    const error = this.workspaceResource.error();
    if (!error) return null;
    return error instanceof ApiError ? error.message : 'This read could not be loaded. Reload the page to try again.';
  });

  /** The result of the last action, read out by screen readers and shown beside the actions. */
  protected readonly announcement = signal('');
  protected readonly problem = signal<string | null>(null);
  protected readonly showHelp = signal(false);

  protected readonly shortcuts = READ_SHORTCUTS;
  protected readonly kindLabels = READ_KIND_LABELS;
  protected readonly statusLabels = READ_STATUS_LABELS;
  protected readonly contextText = blindContextText;
  protected readonly utcText = utcText;

  private signatureOffered = false;

  constructor() {
    // Back from the fresh sign-in with ?sign=1: offer the signature once the read is here.
    effect(() => {
      const workspace = this.workspace();
      if (!this.signRequested() || !workspace || this.signatureOffered) return;
      this.signatureOffered = true;
      untracked(() => {
        this.dropSignRequest();
        if (workspace.status === 'in-progress') this.sign();
      });
    });
  }

  protected selectEffort(index: number): void {
    this.selectedIndex.set(index);
  }

  protected moveEffort(step: 1 | -1): void {
    const efforts = this.workspace()?.efforts ?? [];
    const position = efforts.findIndex((effort) => effort.index === this.selectedIndex());
    const next = efforts[position + step];
    if (next) this.selectedIndex.set(next.index);
  }

  protected changeVerdict(verdict: EffortVerdict): void {
    this.draft.update((draft) => draft && updateEffort(draft, verdict.effortIndex, () => verdict));
  }

  protected writeFeedback(event: Event): void {
    const feedbackText = (event.target as HTMLTextAreaElement).value;
    this.draft.update((draft) => draft && { ...draft, feedbackText });
  }

  /** Keyboard shortcuts of the workspace (see READ_SHORTCUTS); dialogs keep their own keys. */
  protected runShortcut(event: KeyboardEvent): void {
    if (this.prompts.anyOpen || !this.workspace()) return;
    const action = readActionFor(event, focusPlaceOf(event.target));
    if (!action) return;
    event.preventDefault();
    this.perform(action);
  }

  /** Asks the browser to confirm leaving while the draft has unsaved changes. */
  protected holdUnsavedDraft(event: BeforeUnloadEvent): void {
    if (this.dirty()) event.preventDefault();
  }

  private perform(action: ReadAction): void {
    switch (action.kind) {
      case 'next-effort':
        return this.moveEffort(1);
      case 'previous-effort':
        return this.moveEffort(-1);
      case 'set-verdict':
        return this.setVerdictFromKeyboard(action.measure, action.verdict);
      case 'save':
        return this.save();
      case 'reset-zoom':
        this.curvesView()?.resetZoom();
        return;
      case 'toggle-help':
        this.showHelp.update((shown) => !shown);
        return;
    }
  }

  private setVerdictFromKeyboard(measure: Measure, verdict: Verdict): void {
    const index = this.selectedIndex();
    const label = this.selectedEffort()?.label;
    if (index === null || !label) return;
    if (!this.editable()) {
      this.announce('This read can no longer change.');
      return;
    }
    this.draft.update((draft) => draft && withVerdict(draft, index, measure, verdict));
    this.announce(`${label}: ${MEASURE_LABELS[measure]} verdict set to ${VERDICT_LABELS[verdict].label.toLowerCase()}.`);
  }

  protected save(): void {
    if (this.busy() || !this.editable()) return;
    if (!this.dirty()) {
      this.announce('Nothing to save: every change is saved.');
      return;
    }
    this.busy.set('saving');
    this.saveDraft()
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe({
        next: (saved) => this.finish(`Saved (version ${saved.version}).`),
        error: (error: unknown) => this.showWriteError(error),
      });
  }

  /** Opens the signature dialog; on confirmation saves any change, then signs. */
  protected sign(): void {
    const workspace = this.workspace();
    if (!workspace || this.busy() || !this.editable()) return;
    this.prompts
      .confirmSignature({ printedName: this.authSession.user()?.name ?? 'you', meaning: 'authored', blindCode: workspace.blindCode })
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe((confirmed) => {
        if (confirmed) this.sendSignature();
      });
  }

  private sendSignature(): void {
    this.busy.set('signing');
    const saved: Observable<ReadWorkspace> = this.dirty() ? this.saveDraft() : of(this.workspace()!);
    saved
      .pipe(
        switchMap((current) => this.api.sign(this.studyId(), this.readId(), current.version)),
        takeUntilDestroyed(this.destroyRef),
      )
      .subscribe({
        next: (signed) => {
          this.workspaceResource.set(signed);
          const signature = signed.signature;
          this.finish(signature ? `Signed by ${signature.printedName} as author at ${utcSecondsText(signature.signedAt)}.` : 'Signed.');
        },
        error: (error: unknown) => this.showWriteError(error),
      });
  }

  protected release(): void {
    if (this.busy() || !this.editable()) return;
    this.prompts
      .confirmRelease()
      .pipe(
        switchMap((confirmed) => {
          if (!confirmed) return of(false);
          this.busy.set('releasing');
          return this.api.release(this.studyId(), this.readId()).pipe(map(() => true));
        }),
        takeUntilDestroyed(this.destroyRef),
      )
      .subscribe({
        next: (released) => {
          if (!released) return;
          this.busy.set(null);
          void this.router.navigateByUrl(this.homeLink());
        },
        error: (error: unknown) => this.showWriteError(error),
      });
  }

  /** Sends the draft as it is now (on `version`, by default the loaded one) and takes the server's answer. */
  private saveDraft(version?: number): Observable<ReadWorkspace> {
    const sent = this.draft()!;
    return this.api.save(this.studyId(), this.readId(), saveBodyOf(sent, version ?? this.workspace()!.version)).pipe(
      map((saved) => {
        const onScreen = this.draft();
        this.workspaceResource.set(saved);
        // Changes typed while the save was on its way stay on screen, still unsaved.
        if (onScreen && onScreen !== sent) this.draft.set(onScreen);
        return saved;
      }),
    );
  }

  private showWriteError(error: unknown): void {
    this.busy.set(null);
    const stale = staleReadOf(error);
    if (stale) return this.resolveStaleRead(stale);
    if (needsReauthentication(error)) return this.askForReauthentication((error as ApiError).message);
    // Expected refusals (409 locked or taken, 400/422 bad verdicts) arrive as ApiError; others are bugs.
    if (!(error instanceof ApiError)) throw error;
    this.problem.set(error.message);
    this.announce(`Not done: ${error.message}`);
  }

  private resolveStaleRead(stale: StaleRead): void {
    this.announce('Not saved: the read was saved elsewhere since you opened it.');
    this.prompts
      .resolveStaleRead(stale)
      .pipe(takeUntilDestroyed(this.destroyRef))
      .subscribe((choice) => {
        if (choice === 'reload') {
          this.workspaceResource.reload();
          this.announce('Loaded the saved version of the read.');
        } else if (choice === 'overwrite') {
          this.busy.set('saving');
          this.saveDraft(stale.currentVersion)
            .pipe(takeUntilDestroyed(this.destroyRef))
            .subscribe({
              next: (saved) => this.finish(`Saved over the other version (now version ${saved.version}).`),
              error: (error: unknown) => this.showWriteError(error),
            });
        } else {
          this.announce('Your draft is still on screen, not saved.');
        }
      });
  }

  private askForReauthentication(serverMessage: string): void {
    this.announce('To sign, confirm your identity at the sign-in page.');
    this.prompts.explainReauthentication({ href: reauthenticateUrl(this.urlWithSignRequest()), serverMessage });
  }

  /** This page's URL with `sign=1`, to come back to after the fresh sign-in. */
  private urlWithSignRequest(): string {
    const tree = this.router.parseUrl(this.router.url);
    tree.queryParams = { ...tree.queryParams, sign: '1' };
    return this.router.serializeUrl(tree);
  }

  /** Takes `sign=1` out of the URL, so a reload does not ask to sign again. */
  private dropSignRequest(): void {
    void this.router.navigate([], { queryParams: { sign: null }, queryParamsHandling: 'merge', replaceUrl: true });
  }

  private finish(message: string): void {
    this.busy.set(null);
    this.problem.set(null);
    this.announce(message);
  }

  private announce(message: string): void {
    this.announcement.set(message);
  }
}
