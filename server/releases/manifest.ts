/**
 * The manifest of a release: every file with its size and SHA-256, the data cut, the signed
 * release order and the signer's manifestation, stored as canonical JSON beside the files.
 *
 * What makes a forged manifest detectable: the release order (scope, data cut, fingerprint of the
 * locked data) is what the data manager signed, so its hash is in the signatures table; and the
 * SHA-256 of the whole manifest is recorded in the audit trail (hash-chained, append-only) when
 * the release completes. Changing the stored manifest breaks the second, changing the order also
 * breaks the first, and changing a file breaks its hash in the manifest.
 */
import { createHash } from 'node:crypto';
import {
  releaseManifestSchema,
  type FileCheck,
  type ReleaseManifest,
  type ReleaseVerification,
} from '../../shared/contracts/releases.js';
import { canonicalJson } from '../signatures/content-hash.js';

/** The caution that goes with every release. */
export const RELEASE_CAUTION =
  'Over-read results support, and do not replace, review by qualified staff; the protocol, local regulations and licensed practice prevail.';

/** The manifest as stored: canonical JSON (sorted keys), files sorted by name, a final newline. */
export function manifestText(manifest: ReleaseManifest): string {
  const files = [...manifest.files].sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
  return `${canonicalJson({ ...manifest, files })}\n`;
}

export function sha256Hex(bytes: string | Uint8Array): string {
  return createHash('sha256').update(bytes).digest('hex');
}

/** The manifest read back from storage, or why it cannot be read. */
export function parseManifest(text: string): { manifest: ReleaseManifest } | { problem: string } {
  let json: unknown;
  try {
    json = JSON.parse(text);
  } catch {
    return { problem: 'The stored manifest is not JSON.' };
  }
  const parsed = releaseManifestSchema.safeParse(json);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    return { problem: `The stored manifest does not have the manifest layout (${issue.path.join('.') || 'root'}: ${issue.message}).` };
  }
  return { manifest: parsed.data };
}

/** The outcome of verifying a stored release, before the service stamps the time of the check. */
export type ManifestVerification = Omit<ReleaseVerification, 'checkedAt'>;

/** What the service found in storage, the audit trail and the signatures table. */
export interface VerificationInput {
  readonly releaseId: string;
  /** The manifest text in storage, undefined when there is none. */
  readonly storedText: string | undefined;
  /** The manifest SHA-256 the audit trail recorded at completion. */
  readonly recordedSha256: string | undefined;
  /** Whether the signature of the release still matches the order in the stored manifest. */
  readonly signatureValid: (manifest: ReleaseManifest) => boolean | undefined;
  /** SHA-256 and size of each stored file recomputed from its bytes (null: not in storage). */
  readonly storedFiles: ReadonlyMap<string, { readonly sha256: string; readonly sizeBytes: number } | null>;
}

/**
 * Checks the stored manifest against the audit trail and the signature, then every file against
 * the manifest, and says plainly what was changed.
 */
export function verifyRelease(input: VerificationInput): ManifestVerification {
  const problems: string[] = [];
  if (input.storedText === undefined) {
    problems.push(`The manifest of release ${input.releaseId} is missing from storage.`);
    return { ok: false, manifest: 'missing', signature: 'missing', files: [], problems };
  }
  const parsed = parseManifest(input.storedText);
  if ('problem' in parsed) {
    problems.push(`${parsed.problem} It was changed after the release.`);
    return { ok: false, manifest: 'unreadable', signature: 'missing', files: [], problems };
  }
  const { manifest } = parsed;
  const storedSha256 = sha256Hex(input.storedText);
  let manifestStatus: ManifestVerification['manifest'] = 'intact';
  if (input.recordedSha256 === undefined) {
    manifestStatus = 'forged';
    problems.push(`The audit trail records no completed release ${input.releaseId}: the stored manifest was not written by a release.`);
  } else if (storedSha256 !== input.recordedSha256) {
    manifestStatus = 'forged';
    problems.push(
      `The manifest was changed after the release: its SHA-256 is ${storedSha256}, the audit trail recorded ${input.recordedSha256} when the release completed.`,
    );
  }
  if (manifest.order.releaseId !== input.releaseId) {
    manifestStatus = 'forged';
    problems.push(`The stored manifest belongs to release ${manifest.order.releaseId}, not ${input.releaseId}.`);
  }
  const signatureValid = input.signatureValid(manifest);
  const signature: ManifestVerification['signature'] = signatureValid === undefined ? 'missing' : signatureValid ? 'valid' : 'invalid';
  if (signature === 'missing') problems.push(`The release signature ${manifest.signature.signatureId} named in the manifest does not exist.`);
  if (signature === 'invalid') {
    problems.push('The release order in the manifest (scope, data cut, data fingerprint) is not what was signed: the signature no longer matches.');
  }
  const files = manifest.files.map((file): FileCheck => {
    const stored = input.storedFiles.get(file.name) ?? null;
    const base = { name: file.name, expectedSha256: file.sha256, expectedSizeBytes: file.sizeBytes };
    if (!stored) {
      problems.push(`File ${file.name} is missing from storage.`);
      return { ...base, status: 'missing', actualSha256: null, actualSizeBytes: null };
    }
    const intact = stored.sha256 === file.sha256 && stored.sizeBytes === file.sizeBytes;
    if (!intact) {
      problems.push(
        `File ${file.name} was changed after the release: SHA-256 ${stored.sha256} (${stored.sizeBytes} bytes), the manifest says ${file.sha256} (${file.sizeBytes} bytes).`,
      );
    }
    return { ...base, status: intact ? 'intact' : 'tampered', actualSha256: stored.sha256, actualSizeBytes: stored.sizeBytes };
  });
  return { ok: problems.length === 0, manifest: manifestStatus, signature, files, problems };
}
