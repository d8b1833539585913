import { changedFields, valueLines } from './value-diff';

describe('audited values side by side', () => {
  const before = { status: 'awaiting-file', currentUploadId: null, technician: 'TECH-07' };
  const after = { status: 'checked', currentUploadId: 'u-1', technician: 'TECH-07', efforts: 3 };

  it('marks the fields of the new value that differ from the old one', () => {
    expect(valueLines(after, before)).toEqual([
      { field: 'status', text: '"checked"', changed: true },
      { field: 'currentUploadId', text: '"u-1"', changed: true },
      { field: 'technician', text: '"TECH-07"', changed: false },
      { field: 'efforts', text: '3', changed: true },
    ]);
  });

  it('marks every field of a creation and shows nothing for its missing old value', () => {
    expect(valueLines({ code: '101-001' }, null)).toEqual([{ field: 'code', text: '"101-001"', changed: true }]);
    expect(valueLines(null, { code: '101-001' })).toEqual([]);
  });

  it('formats nested values as indented JSON and ignores key order', () => {
    const lines = valueLines({ demographics: { sex: 'male', ageYears: 61 } }, { demographics: { ageYears: 61, sex: 'male' } });
    expect(lines).toEqual([{ field: 'demographics', text: '{\n  "sex": "male",\n  "ageYears": 61\n}', changed: false }]);
  });

  it.each([
    ['a changed text', 'old text', 'new text', true],
    ['the same number', 3, 3, false],
    ['an array that changed', [1, 2], [1, 3], true],
  ])('shows %s whole', (_name, value, other, changed) => {
    expect(valueLines(value, other)).toEqual([{ field: null, text: typeof value === 'string' ? value : JSON.stringify(value, null, 2), changed }]);
  });

  it('lists the changed fields, added and removed ones included', () => {
    expect(changedFields(before, after)).toEqual(['status', 'currentUploadId', 'efforts']);
    expect(changedFields({ a: 1, gone: true }, { a: 1 })).toEqual(['gone']);
    expect(changedFields(null, after)).toEqual([]);
  });
});
