/**
 * Verification of a stored release: the manifest against the SHA-256 the audit trail recorded
 * and the release signature, every file against the manifest. Each way of tampering is named.
 */
import { describe, expect, it } from '@jest/globals';
import { MANIFEST_FORMAT, type ReleaseManifest } from '../../shared/contracts/releases.js';
import { manifestText, sha256Hex, verifyRelease, type VerificationInput } from './manifest.js';

const FILE_A = { name: 'a.csv', contentType: 'text/csv', sizeBytes: 3, sha256: sha256Hex('abc') };
const FILE_B = { name: 'b.xpt', contentType: 'application/x-sas-xport', sizeBytes: 2, sha256: sha256Hex('xy') };
const MANIFEST: ReleaseManifest = {
  format: MANIFEST_FORMAT,
  order: {
    releaseId: 'rel-1',
    studyId: 'study-1',
    studyCode: 'S-1',
    scope: { siteIds: null, visitCodes: null },
    reason: null,
    dataCutAt: '2026-12-01T00:00:00.000Z',
    dataFingerprint: 'f'.repeat(64),
    sessionCount: 2,
    requestedBy: { userId: 'u1', printedName: 'Data Manager' },
  },
  signature: { signatureId: 'sig-1', printedName: 'Data Manager', meaning: 'released', signedAt: '2026-12-01T00:00:00.000Z' },
  study: { code: 'S-1', title: 'Study', sponsor: 'Sponsor' },
  dataAsOf: '2026-11-30T00:00:00.000Z',
  completedAt: '2026-12-01T00:01:00.000Z',
  counts: { sessions: 2, efforts: 6, reRecords: 64 },
  files: [FILE_B, FILE_A],
  caution: 'caution',
};
const TEXT = manifestText(MANIFEST);

function input(overrides: Partial<VerificationInput> = {}): VerificationInput {
  return {
    releaseId: 'rel-1',
    storedText: TEXT,
    recordedSha256: sha256Hex(TEXT),
    signatureValid: () => true,
    storedFiles: new Map([
      ['a.csv', { sha256: sha256Hex('abc'), sizeBytes: 3 }],
      ['b.xpt', { sha256: sha256Hex('xy'), sizeBytes: 2 }],
    ]),
    ...overrides,
  };
}

describe('the stored manifest', () => {
  it('is canonical JSON with the files sorted by name, the same text whatever the key order', () => {
    expect(TEXT.endsWith('}\n')).toBe(true);
    expect(JSON.parse(TEXT).files.map((file: { name: string }) => file.name)).toEqual(['a.csv', 'b.xpt']);
    const reordered = Object.fromEntries(Object.entries(MANIFEST).reverse()) as ReleaseManifest;
    expect(manifestText(reordered)).toBe(TEXT);
  });
});

describe('verification', () => {
  it('passes an untouched release', () => {
    expect(verifyRelease(input())).toMatchObject({ ok: true, manifest: 'intact', signature: 'valid', problems: [] });
  });

  it.each([
    [
      'a changed file',
      input({ storedFiles: new Map([['a.csv', { sha256: sha256Hex('abd'), sizeBytes: 3 }], ['b.xpt', { sha256: sha256Hex('xy'), sizeBytes: 2 }]]) }),
      { manifest: 'intact', signature: 'valid' },
      /^File a\.csv was changed after the release: SHA-256 [0-9a-f]{64} \(3 bytes\), the manifest says [0-9a-f]{64} \(3 bytes\)\.$/,
    ],
    [
      'a missing file',
      input({ storedFiles: new Map([['a.csv', { sha256: sha256Hex('abc'), sizeBytes: 3 }], ['b.xpt', null]]) }),
      { manifest: 'intact' },
      /^File b\.xpt is missing from storage\.$/,
    ],
    [
      'a manifest edited after the release',
      input({ storedText: TEXT.replace('"sessionCount":2', '"sessionCount":3') }),
      { manifest: 'forged' },
      /^The manifest was changed after the release: its SHA-256 is [0-9a-f]{64}, the audit trail recorded [0-9a-f]{64} when the release completed\.$/,
    ],
    ['a manifest no release completed', input({ recordedSha256: undefined }), { manifest: 'forged' }, /records no completed release rel-1/],
    ['a signed order that was changed', input({ signatureValid: () => false }), { signature: 'invalid' }, /not what was signed/],
    ['a signature that does not exist', input({ signatureValid: () => undefined }), { signature: 'missing' }, /signature sig-1 .* does not exist/],
    ['a manifest that is not JSON', input({ storedText: '{ "format": ' }), { manifest: 'unreadable' }, /not JSON\. It was changed after the release\./],
    ['no manifest at all', input({ storedText: undefined }), { manifest: 'missing' }, /manifest of release rel-1 is missing/],
  ] as const)('names %s', (_case, given, status, problem) => {
    const result = verifyRelease(given);
    expect(result).toMatchObject({ ok: false, ...status });
    expect(result.problems).toContainEqual(expect.stringMatching(problem));
  });
});
