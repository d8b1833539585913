import { MAX_RELEASE_REASON_LENGTH, type ReleaseRequest, type ReleaseScope, type ReleaseStatus } from '@shared/contracts/releases';

/** The releases page's own path: the re-authentication round trip comes back here. */
export const RELEASES_PAGE_PATH = '/data-office/releases';

/** What the release form holds. Both lists empty: the whole study. */
export interface ReleaseForm {
  /** Site ids (not numbers): what the release route takes. */
  readonly siteIds: readonly string[];
  readonly visitCodes: readonly string[];
  readonly reason: string;
}

/** A release waiting for the signer to confirm their identity. */
export interface PendingRelease extends ReleaseForm {
  readonly studyId: string;
}

/** The query parameters the page reads (route input binding); a repeated parameter arrives as an array. */
export interface ReleasesPageQuery {
  readonly study?: string;
  readonly pending?: string;
  readonly site?: string | readonly string[];
  readonly visit?: string | readonly string[];
  readonly reason?: string;
}

/** The request body for a filled form, or the problem in words. */
export function releaseRequestOf(form: ReleaseForm): { request: ReleaseRequest } | { problem: string } {
  const reason = form.reason.trim();
  if (reason.length > MAX_RELEASE_REASON_LENGTH) {
    return { problem: `Shorten the reason to ${MAX_RELEASE_REASON_LENGTH} characters (it has ${reason.length}).` };
  }
  const scope: { siteIds?: string[]; visitCodes?: string[] } = {};
  if (form.siteIds.length) scope.siteIds = [...form.siteIds];
  if (form.visitCodes.length) scope.visitCodes = [...form.visitCodes];
  return {
    request: {
      ...(scope.siteIds || scope.visitCodes ? { scope } : {}),
      ...(reason ? { reason } : {}),
    },
  };
}

/**
 * This page's path with the release being asked for in the query, for `returnTo`: after the
 * password entry the page comes back filled in and carries on.
 */
export function returnPathFor(pending: PendingRelease): string {
  const params = new URLSearchParams({ study: pending.studyId, pending: 'release' });
  for (const siteId of pending.siteIds) params.append('site', siteId);
  for (const visitCode of pending.visitCodes) params.append('visit', visitCode);
  if (pending.reason) params.set('reason', pending.reason);
  return `${RELEASES_PAGE_PATH}?${params.toString()}`;
}

/** The release a return from re-authentication carries, or null when the query holds none. */
export function pendingFrom(query: ReleasesPageQuery): PendingRelease | null {
  if (query.pending !== 'release' || !query.study) return null;
  return { studyId: query.study, siteIds: listOf(query.site), visitCodes: listOf(query.visit), reason: query.reason ?? '' };
}

function listOf(value: string | readonly string[] | undefined): string[] {
  if (value === undefined) return [];
  return (typeof value === 'string' ? [value] : [...value]).filter((item) => item.length > 0);
}

/** "Whole study", or "Sites 101, 102 · visits SCR, V2" with site numbers where they are known. */
export function scopeText(scope: ReleaseScope, siteNumbers: ReadonlyMap<string, string>): string {
  const parts: string[] = [];
  if (scope.siteIds?.length) {
    const numbers = scope.siteIds.map((id) => siteNumbers.get(id) ?? id);
    parts.push(`${numbers.length === 1 ? 'Site' : 'Sites'} ${numbers.join(', ')}`);
  }
  if (scope.visitCodes?.length) parts.push(`${scope.visitCodes.length === 1 ? 'visit' : 'visits'} ${scope.visitCodes.join(', ')}`);
  if (parts.length === 0) return 'Whole study';
  const text = parts.join(' · ');
  return text.charAt(0).toUpperCase() + text.slice(1);
}

/** A file size as the manifest gives it, with a rounded reading for people: "12,345 bytes (12.1 KiB)". */
export function sizeText(bytes: number): string {
  const exact = `${bytes.toLocaleString('en-GB')} ${bytes === 1 ? 'byte' : 'bytes'}`;
  if (bytes < 1024) return exact;
  const units = ['KiB', 'MiB', 'GiB'];
  let value = bytes / 1024;
  let unit = 0;
  while (value >= 1024 && unit < units.length - 1) {
    value /= 1024;
    unit++;
  }
  return `${exact} (${value.toFixed(1)} ${units[unit]})`;
}

/** Where a release stands, in the data office's words. */
export const RELEASE_STATUS_LABELS: Readonly<Record<ReleaseStatus, { readonly label: string; readonly icon: string }>> = {
  running: { label: 'Being built', icon: 'hourglass_top' },
  complete: { label: 'Ready', icon: 'check_circle' },
  failed: { label: 'Failed', icon: 'error' },
  interrupted: { label: 'Interrupted by a server restart', icon: 'warning' },
};

/** What each file of a release holds (server/releases/release-builder.ts, RELEASE_FILES); unknown names show their type. */
const FILE_CONTENTS: Readonly<Record<string, string>> = {
  'sessions.csv': 'Sessions, one row per session (CSV)',
  'efforts.csv': 'Efforts, one row per effort (CSV)',
  'reads.csv': 'Final reads, one row per session (CSV)',
  're.csv': 'CDISC SDTM RE domain (CSV)',
  're.xpt': 'CDISC SDTM RE domain (SAS transport, version 5)',
  'define.json': 'Define-style metadata: variables, labels, codelists (JSON)',
  'define.html': 'Define-style metadata, as a page to read',
  'release.xlsx': 'Workbook: one sheet per table and a readme sheet',
};

/** What a release file holds, in words. */
export function fileContents(name: string, contentType: string): string {
  return FILE_CONTENTS[name] ?? contentType;
}
