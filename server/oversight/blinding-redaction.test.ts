import { describe, expect, it } from '@jest/globals';
import { isTreatmentField, WITHHELD_VALUE, withholdTreatmentFields } from './blinding-redaction.js';

describe('treatment fields a blinded monitor must not see', () => {
  // Field names of treatment allocation as CDISC SDTM names them (DM.ARM, ARMCD, ACTARM) and as
  // trial systems commonly do (kit number, randomisation code); common practice otherwise.
  it.each([
    ['treatmentArm', true],
    ['treatment_arm', true],
    ['Treatment', true],
    ['arm', true],
    ['ARMCD', true],
    ['actualArm', true],
    ['randomisationCode', true],
    ['randomization_number', true],
    ['kitNumber', true],
    ['dose-group', true],
    ['allocation', true],
    ['unblindedBy', true],
    // Everyday fields of Tidemark's audited values stay visible.
    ['status', false],
    ['fev1Grade', false],
    ['reasons', false],
    ['armSpan', false],
    ['alarm', false],
    ['doseTime', false],
    ['uploadId', false],
  ])('%s is a treatment field: %s', (name, expected) => {
    expect(isTreatmentField(name)).toBe(expected);
  });

  it('withholds treatment fields at any depth and names their paths', () => {
    const { value, withheld } = withholdTreatmentFields(
      { status: 'checked', subject: { code: '101-001', kitNumber: 'K-77' }, efforts: [{ arm: 'B', fev1L: 2.1 }] },
      'newValue',
    );
    expect(value).toEqual({
      status: 'checked',
      subject: { code: '101-001', kitNumber: WITHHELD_VALUE },
      efforts: [{ arm: WITHHELD_VALUE, fev1L: 2.1 }],
    });
    expect(withheld).toEqual(['newValue.subject.kitNumber', 'newValue.efforts[0].arm']);
  });

  it.each([null, 'text', 3, true])('leaves a value without fields (%p) as it is', (input) => {
    expect(withholdTreatmentFields(input, 'oldValue')).toEqual({ value: input, withheld: [] });
  });
});
