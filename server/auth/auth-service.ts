import { createHash, randomBytes, randomUUID } from 'node:crypto';
import type { AppConfig } from '../config.js';
import { AppError } from '../http/app-error.js';
import type { UserRepository } from '../users/user-repository.js';
import type { AuthRepository } from './auth-repository.js';
import type { Principal } from './principal.js';

/** Prefix that makes a leaked Tidemark token easy to recognise in logs and scanners. */
const TOKEN_PREFIX = 'tmk_';
const LOGIN_ATTEMPT_TTL_MS = 10 * 60 * 1000;

export function sha256Hex(value: string): string {
  return createHash('sha256').update(value).digest('hex');
}

function randomSecret(): string {
  return randomBytes(32).toString('base64url');
}

/** How often a token's last use is written down. */
const TOKEN_USE_RECORD_INTERVAL_MS = 60_000;

/** Sessions, sign-ins in flight and API tokens: who is calling and whether they still may. */
export class AuthService {
  constructor(
    private readonly repository: AuthRepository,
    private readonly users: UserRepository,
    private readonly sessionSettings: AppConfig['session'],
    private readonly clock: () => Date,
  ) {}

  recordLoginAttempt(attempt: { state: string; codeVerifier: string; nonce: string; returnTo: string }): void {
    const now = this.clock();
    this.repository.deleteLoginAttemptsBefore(new Date(now.getTime() - LOGIN_ATTEMPT_TTL_MS).toISOString());
    this.repository.insertLoginAttempt({ ...attempt, createdAt: now.toISOString() });
  }

  /** The attempt for this state, once; refused when unknown or older than ten minutes. */
  takeLoginAttempt(state: string) {
    const attempt = this.repository.takeLoginAttempt(state);
    if (!attempt || this.clock().getTime() - Date.parse(attempt.createdAt) > LOGIN_ATTEMPT_TTL_MS) {
      throw AppError.badRequest(
        'This sign-in link has expired or was already used. Start signing in again.',
        undefined,
        'login-expired',
      );
    }
    return attempt;
  }

  /** Opens a new session (a fresh id every sign-in, so a planted cookie is useless). Returns the cookie value. */
  openSession(email: string, authTime: Date): { cookieValue: string; userId: string } {
    const user = this.users.findByEmail(email);
    if (!user || !user.active) {
      throw AppError.forbidden(
        `The account ${email} has no access to Tidemark. Ask your study admin for an invitation.`,
        'no-account',
      );
    }
    const now = this.clock();
    const cookieValue = randomSecret();
    this.repository.insertSession({
      idHash: sha256Hex(cookieValue),
      userId: user.id,
      csrfToken: randomSecret(),
      authTime: authTime.toISOString(),
      createdAt: now.toISOString(),
      lastSeenAt: now.toISOString(),
      expiresAt: new Date(now.getTime() + this.sessionSettings.maxHours * 3600_000).toISOString(),
    });
    return { cookieValue, userId: user.id };
  }

  /** Resolves a session cookie; refuses forged, ended, idle or expired sessions with the reason. */
  resolveSession(cookieValue: string): Principal {
    const idHash = sha256Hex(cookieValue);
    const session = this.repository.findOpenSession(idHash);
    if (!session) {
      throw AppError.unauthenticated('Your session is not valid or has ended. Sign in again.', 'session-invalid');
    }
    const now = this.clock();
    const idleLimit = Date.parse(session.lastSeenAt) + this.sessionSettings.idleMinutes * 60_000;
    if (now.getTime() > Date.parse(session.expiresAt) || now.getTime() > idleLimit) {
      this.repository.endSession(idHash, now.toISOString());
      throw AppError.unauthenticated('Your session has expired. Sign in again.', 'session-expired');
    }
    const principal = this.principalFor(session.userId, 'session');
    this.repository.touchSession(idHash, now.toISOString());
    return { ...principal, session: { idHash, csrfToken: session.csrfToken, authTime: session.authTime } };
  }

  /**
   * After a forced login at the identity provider (re-authentication before signing): the
   * session keeps its id and CSRF token and takes the new auth time. Refused when someone else
   * logged in at the provider, so one person's password never signs for another's session.
   */
  refreshAuthTime(principal: Principal, email: string, authTime: Date): void {
    if (!principal.session) {
      throw AppError.forbidden('Only a browser session can confirm identity for signing.', 'session-required');
    }
    if (email.toLowerCase() !== principal.user.email.toLowerCase()) {
      throw AppError.forbidden(
        `You confirmed your identity as ${email}, but this session belongs to ${principal.user.email}; nothing was changed.`,
        'reauthentication-mismatch',
      );
    }
    this.repository.updateAuthTime(principal.session.idHash, authTime.toISOString());
  }

  endSession(idHash: string): void {
    this.repository.endSession(idHash, this.clock().toISOString());
  }

  /** Ends whatever session an old cookie named, so signing in again never keeps two alive. */
  endSessionByCookie(cookieValue: string): void {
    this.endSession(sha256Hex(cookieValue));
  }

  /** Issues a bearer token for an existing, active user; the plain value is shown once and never stored. */
  issueToken(email: string, label: string): { token: string; id: string } {
    const user = this.users.findByEmail(email);
    if (!user) throw AppError.notFound(`There is no user with e-mail ${email}.`);
    if (!user.active) throw AppError.forbidden(`The account ${email} is deactivated.`, 'account-inactive');
    const token = TOKEN_PREFIX + randomSecret();
    const id = randomUUID();
    this.repository.insertToken({
      id,
      userId: user.id,
      tokenHash: sha256Hex(token),
      label,
      createdAt: this.clock().toISOString(),
    });
    return { token, id };
  }

  listTokens(userId: string) {
    return this.repository.listTokens(userId).map((row) => ({
      id: row.id,
      label: row.label,
      createdAt: row.createdAt,
      lastUsedAt: row.lastUsedAt,
      revokedAt: row.revokedAt,
    }));
  }

  revokeToken(userId: string, tokenId: string): void {
    if (!this.repository.revokeToken(tokenId, userId, this.clock().toISOString())) {
      throw AppError.notFound('No active token with that id belongs to you.');
    }
  }

  /** Resolves a bearer token to exactly its owner's roles and scopes. */
  resolveToken(token: string): Principal {
    const row = token.startsWith(TOKEN_PREFIX) ? this.repository.findTokenByHash(sha256Hex(token)) : undefined;
    if (!row) throw AppError.unauthenticated('The API token is not recognised.', 'token-invalid');
    if (row.revokedAt) {
      throw AppError.unauthenticated(`The API token was revoked at ${row.revokedAt}.`, 'token-revoked');
    }
    // "Last used" is for people deciding which tokens to revoke: to the minute is enough, and a
    // write per request costs every automated call a WAL commit.
    const now = this.clock();
    if (!row.lastUsedAt || now.getTime() - Date.parse(row.lastUsedAt) >= TOKEN_USE_RECORD_INTERVAL_MS) {
      this.repository.markTokenUsed(row.id, now.toISOString());
    }
    return { ...this.principalFor(row.userId, 'token'), tokenId: row.id };
  }

  private principalFor(userId: string, via: Principal['via']): Principal {
    const user = this.users.findById(userId);
    if (!user || !user.active) {
      throw AppError.unauthenticated('This account is deactivated.', 'account-inactive');
    }
    return {
      user: { id: user.id, email: user.email, name: user.name },
      assignments: this.users.assignmentsOf(user.id),
      via,
    };
  }
}
