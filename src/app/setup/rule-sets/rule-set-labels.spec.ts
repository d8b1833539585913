import type { RuleSetSummary } from '@shared/contracts/protocols';
import { isUsable, ruleSetRef, ruleValueText } from './rule-set-labels';

describe('ruleValueText', () => {
  // Values and units as protocols/ats-ers-2019.v1.json states them.
  it.each([
    [0.15, 'L', '0.15 L'],
    [2, 's', '2 s'],
    [100, 'Hz', '100 Hz'],
    [0.05, 'fraction', '5 %'],
    [0.1, 'fraction', '10 %'],
    [3, 'count', '3'],
    [6, 'years', '6 years'],
    [true, '', 'yes'],
    [false, '', 'no'],
    ['E', '', 'E'],
    ['cough-first-second glottic-stop-first-second', '', 'cough-first-second glottic-stop-first-second'],
    ['', '', 'none'],
  ])('%p %p reads "%s"', (value, unit, text) => {
    expect(ruleValueText({ value, unit })).toBe(text);
  });
});

describe('rule-set references', () => {
  const entry = (changes: Partial<RuleSetSummary>): RuleSetSummary => ({
    id: 'ats-ers-2019',
    version: 1,
    fileName: 'ats-ers-2019.v1.json',
    title: 'ATS/ERS 2019',
    basedOn: 'Graham et al. 2019',
    notes: null,
    ruleCount: 80,
    fromMemoryCount: 51,
    problem: null,
    ...changes,
  });

  it('names a version as id@version', () => {
    expect(ruleSetRef(entry({}))).toBe('ats-ers-2019@1');
    expect(ruleSetRef(entry({ id: 'Misnamed', version: null }))).toBe('Misnamed');
  });

  it.each([
    { what: 'a valid file', changes: {}, usable: true },
    { what: 'a file with a problem', changes: { problem: 'x.v1.json: rule "a": value must be a number', title: null }, usable: false },
    { what: 'a file without a version in its name', changes: { version: null, problem: 'named wrong', title: null }, usable: false },
  ])('$what: usable $usable', ({ changes, usable }) => {
    expect(isUsable(entry(changes))).toBe(usable);
  });
});
