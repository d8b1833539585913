/**
 * The SDTM RE mapping. Variable names and order follow SDTMIG v3.3 (RE domain, recalled from
 * memory); test codes follow CDISC Controlled Terminology where marked, else they are
 * sponsor-defined (extensible codelist); acceptability categories are those of ATS/ERS 2019
 * (Graham et al. 2019).
 */
import { describe, expect, it } from '@jest/globals';
import type { ReleaseEffort, ReleaseSession } from './release-model.js';
import { RE_DERIVED_RECORDS_PER_SESSION, RE_VARIABLES, reRowAsObject, reRowsOfSession, ReSequencer, type ReRow } from './sdtm-re.js';

function effort(index: number, overrides: Partial<ReleaseEffort> = {}): ReleaseEffort {
  return {
    id: `e${index}`,
    effortIndex: index,
    label: `Trial ${index + 1}`,
    fev1L: 2.3456,
    fvcL: 3.2104,
    pefLPerS: 6.789,
    fef2575LPerS: 2.111,
    fetS: 7.456,
    bevL: 0.0444,
    suggestedFev1Verdict: 'acceptable',
    suggestedFvcVerdict: 'acceptable',
    fev1Verdict: 'acceptable',
    fvcVerdict: 'acceptable',
    engineFindings: [],
    readerFindings: [],
    readerComment: '',
    ...overrides,
  };
}

const SESSION: ReleaseSession = {
  id: 's1',
  studyCode: 'HLX-201',
  siteNumber: '102',
  subjectCode: '102-007',
  visitCode: 'V2',
  visitName: 'Visita 2 (semana 4)',
  visitNumber: 3,
  timepointCode: 'T2H',
  timepointName: '2 h post-dose',
  timepointNumber: 2,
  bronchodilator: 'post',
  testedAt: '2026-07-01T08:15:00.000Z',
  timeZone: 'Europe/Madrid',
  ageYears: 61,
  heightCm: 170,
  weightKg: 80,
  sex: 'male',
  technicianCode: 'T1',
  deviceManufacturer: null,
  deviceModel: null,
  deviceSerialNumber: null,
  lock: { scope: 'study', lockedAt: '2026-08-01T00:00:00.000Z' },
  effortCount: 2,
  read: {
    id: 'r1',
    kind: 'first',
    signerName: 'Dr A',
    signedAt: '2026-07-02T00:00:00.000Z',
    result: {
      fev1Grade: 'A',
      fvcGrade: 'C',
      reportedFev1L: 2.3456,
      reportedFvcL: null,
      fev1FvcRatio: null,
      fev1EffortIndex: 0,
      fvcEffortIndex: null,
      endpointEligible: { fev1: true, fvc: false, reasons: [] },
    },
  },
  efforts: [effort(0), effort(1, { fev1L: null, fvcVerdict: 'not_acceptable', fev1Verdict: 'usable', bevL: -0.0004 })],
};

const rows = reRowsOfSession(SESSION).map(reRowAsObject);

describe('RE records of one session', () => {
  it('writes one record per test per effort, then the derived records, RESEQ 1… in that order', () => {
    expect(rows.map((row) => `${row.REGRPID}:${row.RETESTCD}`)).toEqual([
      ...['E1', 'E2'].flatMap((group) =>
        ['FEV1', 'FVC', 'FEV1FVC', 'PEF', 'FEF2575', 'FET', 'BEV', 'FEV1ACPT', 'FVCACPT'].map((code) => `V2-T2H-POST-${group}:${code}`),
      ),
      ...['FEV1', 'FVC', 'FEV1FVC', 'FEV1GRD', 'FVCGRD'].map((code) => `V2-T2H-POST-RPT:${code}`),
    ]);
    expect(rows.map((row) => row.RESEQ)).toEqual(rows.map((_row, index) => index + 1));
  });

  it.each([
    // [record, expected fields] — precision: volumes 3 decimals (L), flows and times 2, ratio 3 (common practice).
    ['E1 FEV1', 0, { REORRES: '2.346', RESTRESN: 2.346, REORRESU: 'L', RESTRESU: 'L', RESTAT: null, REREPNUM: 1, REDRVFL: null }],
    ['E1 FEV1/FVC as a ratio without unit', 2, { REORRES: '0.731', RESTRESN: 0.731, REORRESU: null }],
    ['E1 PEF', 3, { REORRES: '6.79', RESTRESN: 6.79, REORRESU: 'L/s' }],
    ['E1 FET', 5, { REORRES: '7.46', REORRESU: 's' }],
    ['E1 acceptability (ATS/ERS 2019 category)', 7, { RETESTCD: 'FEV1ACPT', REORRES: 'ACCEPTABLE', RESTRESC: 'ACCEPTABLE', RESTRESN: null }],
    ['E2 FEV1 missing: NOT DONE with the reason', 9, { REORRES: null, RESTRESN: null, RESTAT: 'NOT DONE', REREASND: 'NOT COMPUTABLE FROM THE RECORDED CURVE' }],
    ['E2 BEV rounding to zero from below: no minus sign', 15, { REORRES: '0.000', RESTRESN: 0 }],
    ['E2 FEV1 usable', 16, { REORRES: 'USABLE' }],
    ['E2 FVC not acceptable', 17, { REORRES: 'NOT ACCEPTABLE', REREPNUM: 2 }],
    ['reported FEV1, derived', 18, { RETESTCD: 'FEV1', REORRES: '2.346', REDRVFL: 'Y', REREPNUM: null, REGRPID: 'V2-T2H-POST-RPT' }],
    ['reported FVC missing', 19, { RESTAT: 'NOT DONE', REREASND: 'NO ACCEPTABLE OR USABLE EFFORT', REDRVFL: 'Y' }],
    ['FVC grade', 22, { RETESTCD: 'FVCGRD', RETEST: 'FVC Quality Grade', REORRES: 'C' }],
  ] as const)('%s', (_case, index, expected) => {
    expect(rows[index]).toMatchObject(expected);
  });

  it('fills the identifiers and timing of every record: USUBJID, evaluator, visit, local time with offset, time point with pre/post', () => {
    for (const row of rows) {
      expect(row).toMatchObject({
        STUDYID: 'HLX-201',
        DOMAIN: 'RE',
        USUBJID: 'HLX-201-102-007',
        REMETHOD: 'SPIROMETRY',
        REEVAL: 'INDEPENDENT ASSESSOR',
        VISITNUM: 3,
        VISIT: 'Visita 2 (semana 4)',
        // 08:15 UTC in Madrid in July is 10:15 at UTC+2 (summer time).
        REDTC: '2026-07-01T10:15:00+02:00',
        RETPT: '2 h post-dose POST-BRONCHODILATOR',
        RETPTNUM: 22,
      });
    }
  });

  it('writes texts as ASCII (as the transport file holds them)', () => {
    const [first] = reRowsOfSession({ ...SESSION, visitName: 'Visite 2 – Woche 4, Zürich' }).map(reRowAsObject);
    expect(first.VISIT).toBe('Visite 2 ? Woche 4, Zurich');
  });

  it('has every SDTMIG variable name within 8 characters', () => {
    for (const name of RE_VARIABLES) expect(name).toMatch(/^[A-Z][A-Z0-9]{1,7}$/);
  });
});

describe('derived records', () => {
  it('gives every session the same number of derived records, whatever its efforts', () => {
    for (const efforts of [SESSION.efforts, [], [...SESSION.efforts, ...SESSION.efforts]]) {
      const derived = reRowsOfSession({ ...SESSION, efforts }).filter((row) => reRowAsObject(row).REDRVFL === 'Y');
      expect(derived).toHaveLength(RE_DERIVED_RECORDS_PER_SESSION);
    }
  });
});

describe('RESEQ across sessions', () => {
  it('continues per subject', () => {
    const whole = new ReSequencer();
    const all: ReRow[] = [];
    whole.emit(SESSION, (row) => all.push([...row]));
    whole.emit({ ...SESSION, id: 's2', visitCode: 'V3' }, (row) => all.push([...row]));
    whole.emit({ ...SESSION, id: 's3', subjectCode: '101-0002' }, (row) => all.push([...row]));
    const seqOf = (row: ReRow) => reRowAsObject(row).RESEQ;
    const perSession = all.length / 3;
    expect(all.map(seqOf)).toEqual([...all.slice(0, 2 * perSession).map((_row, index) => index + 1), ...all.slice(0, perSession).map((_row, index) => index + 1)]);
  });
});
