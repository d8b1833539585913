/**
 * Two versions of a rule set compared rule by rule. Pure: the caller reads the files.
 */
import type { RuleField, RuleSetRule } from '../../shared/contracts/protocols.js';

/** The fields compared, in the order a reader scans them. */
const COMPARED_FIELDS: readonly RuleField[] = ['value', 'unit', 'source', 'status', 'description'];

/** What changed between two lists of rules. */
export interface RuleListDifference {
  /** Rules only in `to`, in its order. */
  readonly added: RuleSetRule[];
  /** Rules only in `from`, in its order. */
  readonly removed: RuleSetRule[];
  /** Rules in both with at least one field changed, in the order of `from`. */
  readonly changed: { ruleId: string; changedFields: RuleField[]; from: RuleSetRule; to: RuleSetRule }[];
  readonly unchangedCount: number;
}

/** Compares two lists of rules by rule id. */
export function compareRules(from: readonly RuleSetRule[], to: readonly RuleSetRule[]): RuleListDifference {
  const toById = new Map(to.map((rule) => [rule.id, rule]));
  const fromIds = new Set(from.map((rule) => rule.id));
  const removed: RuleSetRule[] = [];
  const changed: RuleListDifference['changed'] = [];
  let unchangedCount = 0;
  for (const before of from) {
    const after = toById.get(before.id);
    if (!after) {
      removed.push(before);
      continue;
    }
    // Object.is: 0.1 and 0.10 are the same number, but true and "true" are not the same value.
    const changedFields = COMPARED_FIELDS.filter((field) => !Object.is(before[field], after[field]));
    if (changedFields.length === 0) unchangedCount++;
    else changed.push({ ruleId: before.id, changedFields, from: before, to: after });
  }
  const added = to.filter((rule) => !fromIds.has(rule.id));
  return { added, removed, changed, unchangedCount };
}
