import type { ReferenceSpotCheck } from '@shared/contracts/reference-sets';

/** A file size in words, e.g. "115 kB". */
export function fileSizeText(sizeBytes: number): string {
  if (sizeBytes < 1000) return `${sizeBytes} bytes`;
  if (sizeBytes < 1_000_000) return `${(sizeBytes / 1000).toFixed(sizeBytes < 10_000 ? 1 : 0)} kB`;
  return `${(sizeBytes / 1_000_000).toFixed(1)} MB`;
}

/** The first characters of a SHA-256, enough to tell files apart on screen; the full one is in the title. */
export function shortSha256(sha256: string): string {
  return `${sha256.slice(0, 12)}…`;
}

/** How far a spot check's found value lies from the expected one, in words. */
export function spotCheckDifference(check: ReferenceSpotCheck): string {
  if (check.found === null) return 'no value computed';
  const difference = Math.abs(check.found - check.expected);
  if (difference === 0) return 'identical';
  return `differs by ${difference.toPrecision(2)} (accepted: ${check.tolerance})`;
}
