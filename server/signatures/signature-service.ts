/**
 * Electronic signatures under 21 CFR Part 11. Tidemark holds no passwords: the two components of
 * the signature (user id and password, 11.200(a)(1)) are given at the identity provider, and what
 * reaches Tidemark is the provider's `auth_time`, the moment the password was last entered. The
 * first signing in a session therefore counts as executed with all components only when the
 * signer has just logged in at the provider with the password: either the sign-in itself or a
 * re-authentication forced with `prompt=login` and `max_age=0` (GET /auth/reauthenticate), whose
 * callback refreshes the session's authTime. Further signings during the same continuous,
 * controlled session are allowed by 11.200(a)(1)(i) with fewer components, and Tidemark accepts
 * them only while that password entry is at most {@link REAUTHENTICATION_MAX_AGE_MS} old; after
 * the window, or from an API token (no person present at a provider login), it answers 401
 * `reauthentication-required`. Each signature row keeps the printed name, meaning and UTC time
 * (11.50), the auth_time behind it, and a SHA-256 of the signed content that binds it to its
 * record (11.70): a record changed afterwards shows its signature as not valid.
 */
import { randomUUID } from 'node:crypto';
import type { SignatureManifestation, SignatureMeaning } from '../../shared/contracts/reading.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import { contentHash } from './content-hash.js';
import type { SignatureRepository, SignatureRow } from './signature-repository.js';

export { contentHash } from './content-hash.js';
export type { SignatureRow } from './signature-repository.js';

/** How recent the password entry at the identity provider must be for a signature (5 minutes). */
export const REAUTHENTICATION_MAX_AGE_MS = 5 * 60_000;

/** How the signer's identity was confirmed, as stored with each signature. */
const SIGNATURE_METHOD = 'identity-provider-password-login';

/** What is being signed. */
export interface SignRequest {
  meaning: SignatureMeaning;
  /** Kind of record, e.g. `read`; with recordId it names the record the signature belongs to. */
  recordType: string;
  recordId: string;
  /** The record's content as signed; its canonical SHA-256 is stored. */
  content: unknown;
}

/** Executes and shows electronic signatures. */
export class SignatureService {
  constructor(
    private readonly repository: SignatureRepository,
    private readonly clock: () => Date,
    private readonly maxAgeMs: number = REAUTHENTICATION_MAX_AGE_MS,
  ) {}

  /**
   * Throws AppError 401 'reauthentication-required' unless principal is a browser session
   * re-authenticated within maxAgeMs (default 5 min). Inserts the signatures row (call inside
   * audit.write so it commits with the signed change) and returns it.
   */
  sign(principal: Principal, request: SignRequest): SignatureRow {
    const authTime = this.freshAuthTime(principal);
    const row: SignatureRow = {
      id: randomUUID(),
      userId: principal.user.id,
      printedName: principal.user.name,
      meaning: request.meaning,
      signedAt: this.clock().toISOString(),
      recordType: request.recordType,
      recordId: request.recordId,
      contentHash: contentHash(request.content),
      authTime,
      method: SIGNATURE_METHOD,
    };
    this.repository.insert(row);
    return row;
  }

  /** Printed name, meaning, UTC time and whether the content still hashes to what was signed. */
  manifestation(signatureId: string, currentContent: unknown): SignatureManifestation {
    const row = this.repository.find(signatureId);
    if (!row) throw AppError.notFound('There is no such signature.');
    return {
      printedName: row.printedName,
      meaning: row.meaning,
      signedAt: row.signedAt,
      valid: row.contentHash === contentHash(currentContent),
    };
  }

  /** The signer's last password entry at the identity provider, if recent enough to sign with. */
  private freshAuthTime(principal: Principal): string {
    if (principal.via !== 'session' || !principal.session) {
      throw AppError.unauthenticated(
        'An API token cannot sign: signing needs you in the browser, confirming your identity with your password.',
        'reauthentication-required',
      );
    }
    const authTime = principal.session.authTime;
    const ageMs = this.clock().getTime() - Date.parse(authTime);
    if (!Number.isFinite(ageMs) || ageMs > this.maxAgeMs) {
      const minutes = Math.round(this.maxAgeMs / 60_000);
      const ago = Number.isFinite(ageMs) ? `${Math.floor(ageMs / 60_000)} minutes ago` : 'at an unknown time';
      throw new AppError(
        401,
        'reauthentication-required',
        `Confirm your identity to sign: you last entered your password ${ago}, and a signature needs it within the last ${minutes} minutes. Nothing was signed.`,
        { authTime, maxAgeMinutes: minutes },
      );
    }
    return authTime;
  }
}
