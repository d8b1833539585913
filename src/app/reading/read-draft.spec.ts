import { describe, expect, it } from '@jest/globals';

import type { ReadWorkspace } from '@shared/contracts/reading';
import { draftChanged, draftOf, overrideCount, withFinding, withVerdict } from './read-draft';

// A fictional read of two efforts; the second carries an engine finding and a "usable" FEV1 suggestion.
const WORKSPACE = {
  version: 4,
  feedbackText: 'Good effort.',
  efforts: [
    { index: 0, label: 'Effort 1', metrics: {}, findings: [], suggestedFev1Verdict: 'acceptable', suggestedFvcVerdict: 'acceptable', verdictReasons: { fev1: [], fvc: [] } },
    {
      index: 1,
      label: 'Effort 2',
      metrics: {},
      findings: [{ code: 'bev-excessive', message: 'Slow start.', values: { bevL: 0.2 } }],
      suggestedFev1Verdict: 'usable',
      suggestedFvcVerdict: 'acceptable',
      verdictReasons: { fev1: ['Slow start.'], fvc: [] },
    },
  ],
  verdicts: [{ effortIndex: 0, fev1Verdict: 'acceptable', fvcVerdict: 'usable', findings: ['end-early', 'cough-late'], comment: 'Short blow.' }],
} as unknown as ReadWorkspace;

describe('draftOf', () => {
  it("keeps the reader's saved verdicts and pre-fills the engine's suggestion, with its finding codes, elsewhere", () => {
    expect(draftOf(WORKSPACE)).toEqual({
      verdicts: [
        WORKSPACE.verdicts[0],
        { effortIndex: 1, fev1Verdict: 'usable', fvcVerdict: 'acceptable', findings: ['bev-excessive'], comment: '' },
      ],
      feedbackText: 'Good effort.',
    });
  });
});

describe('draftChanged', () => {
  const saved: ReadWorkspace = { ...WORKSPACE, verdicts: [...draftOf(WORKSPACE).verdicts] };

  it('counts pre-filled suggestions the server does not hold yet as unsaved', () => {
    expect(draftChanged(WORKSPACE, draftOf(WORKSPACE))).toBe(true);
  });

  it('sees no change in a draft equal to the saved read, whatever the order of its finding codes', () => {
    const reordered = withFinding(withFinding(draftOf(saved), 0, 'end-early', false), 0, 'end-early', true);
    expect(reordered.verdicts[0].findings).toEqual(['cough-late', 'end-early']);
    expect(draftChanged(saved, reordered)).toBe(false);
  });

  it('sees a changed verdict and a changed feedback text', () => {
    expect(draftChanged(saved, withVerdict(draftOf(saved), 1, 'fev1', 'not_acceptable'))).toBe(true);
    expect(draftChanged(saved, { ...draftOf(saved), feedbackText: 'Coach a faster start.' })).toBe(true);
  });
});

describe('overrideCount', () => {
  it('counts each FEV1 or FVC verdict that differs from the suggestion', () => {
    const draft = withVerdict(draftOf(WORKSPACE), 1, 'fev1', 'not_acceptable');
    // Effort 1 FVC (usable, suggested acceptable) and Effort 2 FEV1 (not acceptable, suggested usable).
    expect(overrideCount(WORKSPACE.efforts, draft)).toBe(2);
  });
});
