import type { Role } from '../../shared/contracts/auth.js';
import { auditRowHash, GENESIS_HASH, verifyAuditChain, type ChainVerification } from './audit-chain.js';
import type { AuditRepository } from './audit-repository.js';

/** Who did it: a user acting in one role, or Tidemark itself (start-up sweep, demo seed). */
export interface AuditActor {
  readonly userId: string;
  readonly role: Role | 'system';
}

/** The system actor, for changes no person made. */
export const SYSTEM_ACTOR: AuditActor = { userId: 'system', role: 'system' };

/** One change to record. */
export interface AuditChange {
  readonly studyId?: string | null;
  readonly siteId?: string | null;
  /** What kind of thing changed, e.g. `session`, `upload`, `subject`. */
  readonly entity: string;
  readonly entityId: string;
  /** What happened, e.g. `register`, `receive-file`, `check`, `reject`, `correct`. */
  readonly action: string;
  readonly oldValue?: unknown;
  readonly newValue?: unknown;
  /** Required by the caller where the regulation wants one (corrections, unlocks). */
  readonly reason?: string | null;
}

/** Records one change; only callable inside {@link AuditTrail.write}. */
export type RecordChange = (change: AuditChange) => void;

/**
 * The one path for every write that matters: the caller's writes and their audit rows
 * commit together in one transaction, or neither does.
 */
export class AuditTrail {
  constructor(
    private readonly repository: AuditRepository,
    private readonly clock: () => Date,
  ) {}

  write<T>(actor: AuditActor, work: (record: RecordChange) => T): T {
    return this.repository.inTransaction(() => work((change) => this.append(actor, change)));
  }

  verify(): ChainVerification {
    return verifyAuditChain(this.repository.chain());
  }

  private append(actor: AuditActor, change: AuditChange): void {
    const last = this.repository.lastRow();
    const fields = {
      sequence: (last?.sequence ?? 0) + 1,
      at: this.clock().toISOString(),
      userId: actor.userId,
      role: actor.role,
      studyId: change.studyId ?? null,
      siteId: change.siteId ?? null,
      entity: change.entity,
      entityId: change.entityId,
      action: change.action,
      oldValue: change.oldValue === undefined ? null : JSON.stringify(change.oldValue),
      newValue: change.newValue === undefined ? null : JSON.stringify(change.newValue),
      reason: change.reason ?? null,
      previousHash: last?.hash ?? GENESIS_HASH,
    };
    this.repository.append({ ...fields, hash: auditRowHash(fields) });
  }
}
