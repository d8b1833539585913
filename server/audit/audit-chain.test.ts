import { describe, expect, it } from '@jest/globals';
import { auditRowHash, GENESIS_HASH, verifyAuditChain, type ChainedAuditFields } from './audit-chain.js';

/** A valid chain of n rows built the way the audit trail writes them. */
function chain(n: number): (ChainedAuditFields & { hash: string })[] {
  const rows: (ChainedAuditFields & { hash: string })[] = [];
  let previousHash = GENESIS_HASH;
  for (let sequence = 1; sequence <= n; sequence++) {
    const fields: ChainedAuditFields = {
      sequence,
      at: `2026-12-01T10:00:0${sequence % 10}.000Z`,
      userId: 'user-a',
      role: 'site-coordinator',
      studyId: 'study-1',
      siteId: 'site-1',
      entity: 'session',
      entityId: `s${sequence}`,
      action: 'register',
      oldValue: null,
      newValue: JSON.stringify({ n: sequence }),
      reason: null,
      previousHash,
    };
    const hash = auditRowHash(fields);
    rows.push({ ...fields, hash });
    previousHash = hash;
  }
  return rows;
}

describe('audit hash chain', () => {
  it('accepts an intact chain and an empty one', () => {
    expect(verifyAuditChain(chain(5))).toMatchObject({ ok: true, rowsChecked: 5, lastSequence: 5 });
    expect(verifyAuditChain([])).toMatchObject({ ok: true, rowsChecked: 0, lastHash: GENESIS_HASH });
  });

  it.each([
    ['a changed new value', (rows: ReturnType<typeof chain>) => (rows[2] = { ...rows[2], newValue: '{"n":99}' }), 3, /changed after it was written/],
    ['a changed reason', (rows: ReturnType<typeof chain>) => (rows[1] = { ...rows[1], reason: 'edited' }), 2, /changed after it was written/],
    ['a deleted row in the middle', (rows: ReturnType<typeof chain>) => rows.splice(2, 1), 4, /row 3 is missing/],
    ['a deleted first row', (rows: ReturnType<typeof chain>) => rows.splice(0, 1), 2, /row 1 is missing/],
    [
      'a row re-hashed after a change (the next row no longer links)',
      (rows: ReturnType<typeof chain>) => {
        const changed = { ...rows[1], userId: 'user-b' };
        rows[1] = { ...changed, hash: auditRowHash(changed) };
      },
      3,
      /does not link/,
    ],
  ])('names the first broken row after %s', (_name, tamper, brokenAt, problem) => {
    const rows = chain(5);
    tamper(rows);
    const result = verifyAuditChain(rows);
    expect(result.ok).toBe(false);
    expect(result.firstBreak?.sequence).toBe(brokenAt);
    expect(result.firstBreak?.problem).toMatch(problem);
  });
});
