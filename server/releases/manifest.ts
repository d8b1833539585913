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
import * as z from 'zod';
import { canonicalJson } from '../signatures/content-hash.js';

export const MANIFEST_FORMAT = 'tidemark-release-manifest/1';

/** The caution that goes with every release. */
export const RELEASE_CAUTION =
  'Over-read results support, and do not replace, review by qualified staff; the protocol, local regulations and licensed practice prevail.';

const scopeSchema = z.object({
  siteIds: z.array(z.string()).nullable(),
  visitCodes: z.array(z.string()).nullable(),
});

/** What the data manager signs: which locked data, cut when, and a fingerprint of it. */
export const releaseOrderSchema = z.object({
  releaseId: z.string(),
  studyId: z.string(),
  studyCode: z.string(),
  scope: scopeSchema,
  reason: z.string().nullable(),
  dataCutAt: z.string(),
  /** SHA-256 over the released sessions, their final reads and versions (see release-service). */
  dataFingerprint: z.string(),
  sessionCount: z.number().int(),
  requestedBy: z.object({ userId: z.string(), printedName: z.string() }),
});
export type ReleaseOrder = z.infer<typeof releaseOrderSchema>;
export type ReleaseScope = z.infer<typeof scopeSchema>;

export const manifestFileSchema = z.object({
  name: z.string(),
  contentType: z.string(),
  sizeBytes: z.number().int().nonnegative(),
  sha256: z.string().regex(/^[0-9a-f]{64}$/),
});
export type ManifestFile = z.infer<typeof manifestFileSchema>;

export const releaseManifestSchema = z.object({
  format: z.literal(MANIFEST_FORMAT),
  order: releaseOrderSchema,
  /** The signature over the order (21 CFR 11.50: printed name, UTC time, meaning). */
  signature: z.object({
    signatureId: z.string(),
    printedName: z.string(),
    meaning: z.literal('released'),
    signedAt: z.string(),
  }),
  study: z.object({ code: z.string(), title: z.string(), sponsor: z.string() }),
  /** Latest change in the released data (ISO UTC): the date inside the transport files. */
  dataAsOf: z.string(),
  completedAt: z.string(),
  counts: z.object({ sessions: z.number().int(), efforts: z.number().int(), reRecords: z.number().int() }),
  files: z.array(manifestFileSchema),
  caution: z.string(),
});
export type ReleaseManifest = z.infer<typeof releaseManifestSchema>;

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

/** What verification found for one file. */
export interface FileCheck {
  readonly name: string;
  readonly status: 'intact' | 'tampered' | 'missing';
  readonly expectedSha256: string;
  readonly actualSha256: string | null;
  readonly expectedSizeBytes: number;
  readonly actualSizeBytes: number | null;
}

/** The outcome of verifying a stored release. */
export interface ReleaseVerification {
  readonly ok: boolean;
  readonly manifest: 'intact' | 'forged' | 'unreadable' | 'missing';
  readonly signature: 'valid' | 'invalid' | 'missing';
  readonly files: FileCheck[];
  /** Every problem in words, empty when ok. */
  readonly problems: string[];
}

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
export function verifyRelease(input: VerificationInput): ReleaseVerification {
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
  let manifestStatus: ReleaseVerification['manifest'] = 'intact';
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
  const signature: ReleaseVerification['signature'] = signatureValid === undefined ? 'missing' : signatureValid ? 'valid' : 'invalid';
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
