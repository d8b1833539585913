import type { RoleAssignment } from '../../shared/contracts/auth.js';

/** Who is calling, resolved from a session cookie or a bearer token. */
export interface Principal {
  readonly user: { readonly id: string; readonly email: string; readonly name: string };
  readonly assignments: readonly RoleAssignment[];
  readonly via: 'session' | 'token';
  /** Present for browser sessions. */
  readonly session?: { readonly idHash: string; readonly csrfToken: string; readonly authTime: string };
  /** Present for bearer tokens. */
  readonly tokenId?: string;
}

declare module 'express-serve-static-core' {
  interface Request {
    /** Set by the authenticate middleware when the caller proved who they are. */
    principal?: Principal;
  }
}
