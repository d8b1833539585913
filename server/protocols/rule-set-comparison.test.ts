import { describe, expect, it } from '@jest/globals';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import type { RuleSetRule } from '../../shared/contracts/protocols.js';
import { PROTOCOLS_DIR } from './protocol-catalogue.js';
import { compareRules } from './rule-set-comparison.js';

const rule = (id: string, changes: Partial<RuleSetRule> = {}): RuleSetRule => ({
  id,
  description: `${id} described`,
  value: 1,
  unit: 'L',
  source: 'common practice',
  status: 'common-practice',
  ...changes,
});

function ruleSetFile(name: string): RuleSetRule[] {
  return (JSON.parse(readFileSync(path.join(PROTOCOLS_DIR, name), 'utf8')) as { rules: RuleSetRule[] }).rules;
}

describe('compareRules', () => {
  const cases: {
    name: string;
    from: RuleSetRule[];
    to: RuleSetRule[];
    added: string[];
    removed: string[];
    changed: [string, string[]][];
    unchanged: number;
  }[] = [
    { name: 'identical lists', from: [rule('a'), rule('b')], to: [rule('a'), rule('b')], added: [], removed: [], changed: [], unchanged: 2 },
    { name: 'order alone is no change', from: [rule('a'), rule('b')], to: [rule('b'), rule('a')], added: [], removed: [], changed: [], unchanged: 2 },
    { name: 'a rule added', from: [rule('a')], to: [rule('a'), rule('c')], added: ['c'], removed: [], changed: [], unchanged: 1 },
    { name: 'a rule removed', from: [rule('a'), rule('b')], to: [rule('b')], added: [], removed: ['a'], changed: [], unchanged: 1 },
    {
      name: 'value and source corrected, status raised',
      from: [rule('a', { value: 0.1, source: 'recalled', status: 'from-memory' })],
      to: [rule('a', { value: 0.15, source: 'Table 7', status: 'verified' })],
      added: [],
      removed: [],
      changed: [['a', ['value', 'source', 'status']]],
      unchanged: 0,
    },
    { name: 'unit changed', from: [rule('a', { unit: 'L' })], to: [rule('a', { unit: 'fraction' })], added: [], removed: [], changed: [['a', ['unit']]], unchanged: 0 },
    {
      name: 'a flag and its text spelling differ',
      from: [rule('a', { value: true, unit: '' })],
      to: [rule('a', { value: 'true', unit: '' })],
      added: [],
      removed: [],
      changed: [['a', ['value']]],
      unchanged: 0,
    },
    { name: 'description only', from: [rule('a')], to: [rule('a', { description: 'reworded' })], added: [], removed: [], changed: [['a', ['description']]], unchanged: 0 },
    { name: 'both empty', from: [], to: [], added: [], removed: [], changed: [], unchanged: 0 },
  ];

  it.each(cases)('$name', ({ from, to, added, removed, changed, unchanged }) => {
    const difference = compareRules(from, to);
    expect(difference.added.map((r) => r.id)).toEqual(added);
    expect(difference.removed.map((r) => r.id)).toEqual(removed);
    expect(difference.changed.map((c) => [c.ruleId, c.changedFields])).toEqual(changed);
    expect(difference.unchangedCount).toBe(unchanged);
  });

  it('carries the old and new rule of a change', () => {
    const [change] = compareRules([rule('a', { value: 0.1 })], [rule('a', { value: 0.2 })]).changed;
    expect(change.from.value).toBe(0.1);
    expect(change.to.value).toBe(0.2);
  });

  it('ats-ers-2019 v1 and ats-ers-2019-endpoint-strict v1 differ only in the two study tightening rules', () => {
    // protocols/ats-ers-2019-endpoint-strict.v1.json: "endpoint values need grade B or better from at
    // least two acceptable efforts. Everything else as ats-ers-2019 v1."
    const standard = ruleSetFile('ats-ers-2019.v1.json');
    const strict = ruleSetFile('ats-ers-2019-endpoint-strict.v1.json');
    const difference = compareRules(standard, strict);
    expect(difference.added).toEqual([]);
    expect(difference.removed).toEqual([]);
    expect(
      difference.changed.map((change) => ({ id: change.ruleId, fields: change.changedFields, from: change.from.value, to: change.to.value })),
    ).toEqual([
      { id: 'study.min-grade-for-endpoint', fields: ['value', 'source', 'description'], from: 'E', to: 'B' },
      { id: 'study.min-acceptable-efforts', fields: ['value', 'source'], from: 1, to: 2 },
    ]);
    expect(difference.unchangedCount).toBe(standard.length - 2);
  });
});
