import { ChangeDetectionStrategy, Component, computed, inject, input } from '@angular/core';
import { MatAnchor } from '@angular/material/button';
import { MatIcon } from '@angular/material/icon';
import { MatProgressBar } from '@angular/material/progress-bar';
import { MatTableModule } from '@angular/material/table';
import { RouterLink } from '@angular/router';

import type { FileCheck, ManifestFile, ReleaseManifest, ReleaseVerification } from '@shared/contracts/releases';
import { CautionNote } from '../../ui/caution-note/caution-note';
import { DataOfficeLocksApi } from '../data-office-locks-api';
import { DataOfficeReleasesApi } from '../data-office-releases-api';
import { signatureLine, utcText } from '../locks/lock-request';
import { ReleaseProgressView } from './release-progress';
import { RELEASE_STATUS_LABELS, fileContents, scopeText, sizeText } from './release-request';

/** A manifest file as the page lists it: what it holds, its check, and whether it may be downloaded. */
interface FileRow extends ManifestFile {
  readonly contents: string;
  readonly size: string;
  readonly check: FileCheck['status'] | 'unchecked';
  readonly url: string;
}

const SIGNATURE_STATES: Readonly<Record<ReleaseVerification['signature'], string>> = {
  valid: 'valid: the release order is unchanged since signing',
  invalid: 'not valid: the release order in the manifest is not what was signed',
  missing: 'not found: the signature named in the manifest does not exist',
};

/**
 * One release, at `/data-office/releases/:studyId/:releaseId` (the link of the release-ready
 * e-mail): its signature as signed records show it (21 CFR 11.50: printed name, meaning, UTC
 * time), the server's verification made at this reading, the manifest with every file's size and
 * SHA-256 and a download for each, and the caution line. While it is built, its progress bar.
 */
@Component({
  selector: 'app-release-detail',
  imports: [CautionNote, MatAnchor, MatIcon, MatProgressBar, MatTableModule, ReleaseProgressView, RouterLink],
  templateUrl: './release-detail.html',
  styleUrl: './release-detail.scss',
  changeDetection: ChangeDetectionStrategy.OnPush,
})
export class ReleaseDetailPage {
  private readonly api = inject(DataOfficeReleasesApi);
  private readonly locksApi = inject(DataOfficeLocksApi);

  // Route parameters (route input binding).
  readonly studyId = input.required<string>();
  readonly releaseId = input.required<string>();

  protected readonly detail = this.api.releaseOf(
    () => this.studyId(),
    () => this.releaseId(),
  );
  private readonly sites = this.locksApi.sitesOf(() => this.studyId());

  protected readonly release = computed(() => (this.detail.hasValue() ? this.detail.value().release : undefined));
  protected readonly manifest = computed<ReleaseManifest | null>(() => (this.detail.hasValue() ? this.detail.value().manifest : null));
  protected readonly verification = computed<ReleaseVerification | null>(() => (this.detail.hasValue() ? this.detail.value().verification : null));
  protected readonly scope = computed(() => {
    const release = this.release();
    if (!release) return '';
    const sites = this.sites.hasValue() ? this.sites.value() : [];
    return scopeText(release.scope, new Map(sites.map((site) => [site.id, site.number] as const)));
  });
  /** Whether the manifest itself may be trusted: files are served only when it matches the audit trail. */
  protected readonly manifestTrusted = computed(() => this.verification()?.manifest === 'intact');
  protected readonly files = computed<FileRow[]>(() => {
    const manifest = this.manifest();
    if (!manifest) return [];
    const checks = new Map((this.verification()?.files ?? []).map((check) => [check.name, check.status] as const));
    return manifest.files.map((file) => ({
      ...file,
      contents: fileContents(file.name, file.contentType),
      size: sizeText(file.sizeBytes),
      check: checks.get(file.name) ?? 'unchecked',
      url: this.api.fileUrl(this.studyId(), this.releaseId(), file.name),
    }));
  });
  /** The signature over the release order as signed records show it, with its validity from the verification. */
  protected readonly signature = computed(() => {
    const manifest = this.manifest();
    const state = this.verification()?.signature ?? 'missing';
    if (!manifest) return null;
    return { line: signatureLine({ ...manifest.signature, valid: state === 'valid' }), state, valid: state === 'valid' };
  });
  protected readonly manifestUrl = computed(() => this.api.fileUrl(this.studyId(), this.releaseId(), 'manifest.json'));

  protected readonly columns = ['name', 'size', 'sha256', 'download'];
  protected readonly statusLabels = RELEASE_STATUS_LABELS;
  protected readonly signatureStates = SIGNATURE_STATES;
  protected readonly utcText = utcText;

  protected refresh(): void {
    this.detail.reload();
  }
}
