import { describe, expect, it } from '@jest/globals';
import type { ReplayProblem } from '../../shared/contracts/protocols.js';
import type { Grade, Verdict } from '../../shared/spirometry/model.js';
import { diffReplay, type ReplayedSession, type SessionCodes, type SessionOutcome } from './replay-diff.js';

const codes = (sessionId: string): SessionCodes => ({
  sessionId,
  siteNumber: '101',
  subjectCode: '101-001',
  visitCode: 'V2',
  timepointCode: 'PRE-DOSE',
  bronchodilator: 'pre',
});

/** An outcome from compact effort verdicts: 'a' acceptable, 'u' usable, 'n' not acceptable; "au" is FEV1 a, FVC u. */
function outcome(efforts: string[], grades: [Grade, Grade] = ['A', 'A'], endpoint: [boolean, boolean] = [true, true]): SessionOutcome {
  const verdict = (letter: string): Verdict => ({ a: 'acceptable', u: 'usable', n: 'not_acceptable' })[letter] as Verdict;
  return {
    efforts: efforts.map((pair, index) => ({ index, label: `effort-${index + 1}`, fev1: verdict(pair[0]), fvc: verdict(pair[1]) })),
    fev1Grade: grades[0],
    fvcGrade: grades[1],
    endpoint: { fev1: endpoint[0], fvc: endpoint[1] },
  };
}

/** A session whose stored suggestions are those of `current`. */
function session(id: string, current: SessionOutcome, target: SessionOutcome): ReplayedSession {
  return {
    codes: codes(id),
    current,
    target,
    stored: {
      efforts: current.efforts.map((effort) => ({ index: effort.index, fev1: effort.fev1, fvc: effort.fvc })),
      fev1Grade: current.fev1Grade,
      fvcGrade: current.fvcGrade,
    },
  };
}

describe('diffReplay', () => {
  const cases: {
    name: string;
    sessions: ReplayedSession[];
    effortsChanged: number;
    gradeChanges: number;
    endpointChanges: number;
    sessionsListed: number;
    transitions: string[];
  }[] = [
    { name: 'no sessions', sessions: [], effortsChanged: 0, gradeChanges: 0, endpointChanges: 0, sessionsListed: 0, transitions: [] },
    {
      name: 'identical outcomes',
      sessions: [session('s1', outcome(['aa', 'aa', 'un']), outcome(['aa', 'aa', 'un']))],
      effortsChanged: 0,
      gradeChanges: 0,
      endpointChanges: 0,
      sessionsListed: 0,
      transitions: [],
    },
    {
      name: 'one effort loses its FVC acceptability',
      sessions: [session('s1', outcome(['aa', 'aa']), outcome(['aa', 'au']))],
      effortsChanged: 1,
      gradeChanges: 0,
      endpointChanges: 0,
      sessionsListed: 0,
      transitions: ['FVC acceptable>usable 1'],
    },
    {
      name: 'both values of one effort move: one effort, two transitions',
      sessions: [session('s1', outcome(['aa']), outcome(['nn']))],
      effortsChanged: 1,
      gradeChanges: 0,
      endpointChanges: 0,
      sessionsListed: 0,
      transitions: ['FEV1 acceptable>not_acceptable 1', 'FVC acceptable>not_acceptable 1'],
    },
    {
      name: 'transitions summed over sessions and sorted by value, then verdict order',
      sessions: [
        session('s1', outcome(['aa', 'ua']), outcome(['ua', 'aa'])),
        session('s2', outcome(['aa']), outcome(['ua'])),
      ],
      effortsChanged: 3,
      gradeChanges: 0,
      endpointChanges: 0,
      sessionsListed: 0,
      transitions: ['FEV1 acceptable>usable 2', 'FEV1 usable>acceptable 1'],
    },
    {
      name: 'grade change without any verdict change (a narrower tolerance)',
      sessions: [session('s1', outcome(['aa', 'aa', 'aa'], ['A', 'A']), outcome(['aa', 'aa', 'aa'], ['C', 'A']))],
      effortsChanged: 0,
      gradeChanges: 1,
      endpointChanges: 0,
      sessionsListed: 1,
      transitions: [],
    },
    {
      name: 'endpoint eligibility alone (study tightening)',
      sessions: [session('s1', outcome(['aa'], ['E', 'E'], [true, true]), outcome(['aa'], ['E', 'E'], [false, false]))],
      effortsChanged: 0,
      gradeChanges: 0,
      endpointChanges: 1,
      sessionsListed: 1,
      transitions: [],
    },
    {
      name: 'grade and endpoint change in one session: listed once',
      sessions: [session('s1', outcome(['aa'], ['A', 'A'], [true, true]), outcome(['aa'], ['C', 'A'], [false, true]))],
      effortsChanged: 0,
      gradeChanges: 1,
      endpointChanges: 1,
      sessionsListed: 1,
      transitions: [],
    },
  ];

  it.each(cases)('$name', ({ sessions, effortsChanged, gradeChanges, endpointChanges, sessionsListed, transitions }) => {
    const result = diffReplay(sessions, []);
    expect(result.counts).toMatchObject({
      sessionsReplayed: sessions.length,
      efforts: sessions.reduce((sum, s) => sum + s.current.efforts.length, 0),
      effortsChanged,
      sessionsWithGradeChange: gradeChanges,
      sessionsWithEndpointChange: endpointChanges,
      storedVerdictsDiffering: 0,
      storedGradesDiffering: 0,
    });
    expect(result.effortChanges).toHaveLength(effortsChanged);
    expect(result.sessionChanges).toHaveLength(sessionsListed);
    expect(result.verdictTransitions.map((t) => `${t.value} ${t.from}>${t.to} ${t.count}`)).toEqual(transitions);
  });

  it('lists a changed effort with both values, old and new', () => {
    const [change] = diffReplay([session('s1', outcome(['aa', 'aa']), outcome(['aa', 'an']))], []).effortChanges;
    expect(change).toEqual({
      ...codes('s1'),
      effortIndex: 1,
      effortLabel: 'effort-2',
      fev1: { from: 'acceptable', to: 'acceptable' },
      fvc: { from: 'acceptable', to: 'not_acceptable' },
    });
  });

  it('counts stored suggestions that the current rule set no longer gives', () => {
    const replayed = session('s1', outcome(['aa', 'aa']), outcome(['aa', 'aa']));
    const stale: ReplayedSession = {
      ...replayed,
      stored: { efforts: [{ index: 0, fev1: 'usable', fvc: 'acceptable' }], fev1Grade: 'B', fvcGrade: 'A' },
    };
    // Effort 0 differs, effort 1 is missing from the stored list; the FEV1 grade differs.
    expect(diffReplay([stale], []).counts).toMatchObject({ storedVerdictsDiffering: 2, storedGradesDiffering: 1 });
  });

  it('counts each session with problems once', () => {
    const problem = (where: ReplayProblem['where']): ReplayProblem => ({ ...codes('s9'), where, message: 'too short' });
    expect(diffReplay([], [problem('current'), problem('target')]).counts.sessionsWithProblems).toBe(1);
  });
});
