import { createHash } from 'node:crypto';

/** The previous-hash of the first row of the chain. */
export const GENESIS_HASH = '0'.repeat(64);

/** The stored fields of one audit row that its hash covers (all of them but the hash itself). */
export interface ChainedAuditFields {
  readonly sequence: number;
  readonly at: string;
  readonly userId: string;
  readonly role: string;
  readonly studyId: string | null;
  readonly siteId: string | null;
  readonly entity: string;
  readonly entityId: string;
  readonly action: string;
  readonly oldValue: string | null;
  readonly newValue: string | null;
  readonly reason: string | null;
  readonly previousHash: string;
}

/** SHA-256 over a fixed-order JSON array of the row's fields, so any changed field changes the hash. */
export function auditRowHash(row: ChainedAuditFields): string {
  const canonical = JSON.stringify([
    row.sequence,
    row.at,
    row.userId,
    row.role,
    row.studyId,
    row.siteId,
    row.entity,
    row.entityId,
    row.action,
    row.oldValue,
    row.newValue,
    row.reason,
    row.previousHash,
  ]);
  return createHash('sha256').update(canonical).digest('hex');
}

/** The first row that breaks the chain, and how. */
export interface ChainBreak {
  readonly sequence: number;
  readonly problem: string;
}

export interface ChainVerification {
  readonly ok: boolean;
  readonly rowsChecked: number;
  readonly lastSequence: number | null;
  readonly lastHash: string;
  readonly firstBreak: ChainBreak | null;
}

/**
 * Walks rows in sequence order and names the first one that breaks the chain: a changed row
 * (its hash no longer matches its content), a removed or inserted row (its previous-hash no
 * longer matches the row before), or a gap in the sequence.
 */
export function verifyAuditChain(rows: Iterable<ChainedAuditFields & { readonly hash: string }>): ChainVerification {
  let previousHash = GENESIS_HASH;
  let previousSequence: number | null = null;
  let rowsChecked = 0;
  for (const row of rows) {
    const fail = (problem: string): ChainVerification => ({
      ok: false,
      rowsChecked,
      lastSequence: previousSequence,
      lastHash: previousHash,
      firstBreak: { sequence: row.sequence, problem },
    });
    const expectedSequence: number = previousSequence === null ? 1 : previousSequence + 1;
    if (row.sequence !== expectedSequence) {
      return fail(
        `row ${row.sequence} follows ${previousSequence ?? 'the start of the trail'}; row ${expectedSequence} is missing (deleted?)`,
      );
    }
    if (row.previousHash !== previousHash) {
      return fail(`row ${row.sequence} does not link to the row before it (a row was removed, inserted or changed)`);
    }
    if (auditRowHash(row) !== row.hash) {
      return fail(`row ${row.sequence} was changed after it was written (its content no longer matches its hash)`);
    }
    previousHash = row.hash;
    previousSequence = row.sequence;
    rowsChecked++;
  }
  return { ok: true, rowsChecked, lastSequence: previousSequence, lastHash: previousHash, firstBreak: null };
}
