import { describe, expect, it } from '@jest/globals';
import { captureInputError as errorOf } from './testing/capture-input-error.js';
import { DEFAULT_ENGINE_PARAMETERS, analyzeRecording } from './effort-analysis.js';
import { EFFORT_SIGNAL_SYSTEM, buildFhirBundle, parseFhirBundle } from './fhir-bundle.js';
import { type SessionDocument, sessionDocumentToRecordings } from './session-document.js';
import { generateSession } from './synthetic/curve-generator.js';

const round6 = (x: number): number => Math.round(x * 1e6) / 1e6;

function sessionOf(): SessionDocument {
  const efforts = generateSession({ efforts: 2, base: { sampleRateHz: 100 }, perEffort: [undefined, { signal: 'flow' }] }, 8).map((g) => ({
    label: g.recording.label,
    signal: g.recording.signal,
    sampleRateHz: 100,
    values: Array.from(g.recording.values, round6),
  }));
  return {
    format: 'tidemark-session/1',
    metadata: {
      subjectCode: 'S-0042',
      visit: 'V3',
      timepoint: 'pre-dose',
      bronchodilator: 'post',
      testedAt: '2025-03-14T09:30:00+01:00',
      device: { manufacturer: 'Fictional Instruments', model: 'Breeze 2', serialNumber: 'SN-17' },
      technicianCode: 'T-07',
      demographics: { ageYears: 61, heightCm: 172, weightKg: 80, sex: 'female' },
    },
    efforts,
  };
}

type Json = Record<string, any>; // eslint-disable-line @typescript-eslint/no-explicit-any

/** A minimal hand-written R4 Bundle, as device middleware might send it (HL7 FHIR R4 SampledData). */
function middlewareBundle(data: string, unit = 'L/s'): Json {
  return {
    resourceType: 'Bundle',
    type: 'collection',
    entry: [
      { resource: { resourceType: 'Patient', id: 'p1', identifier: [{ system: 'urn:site', value: 'SUBJ-9' }], name: [{ family: 'Never-Read' }], gender: 'male' } },
      {
        resource: {
          resourceType: 'Observation',
          id: 'blow-a',
          status: 'final',
          code: { text: 'forced expiration' },
          subject: { reference: 'Patient/p1' },
          effectiveDateTime: '2025-05-02T10:15:00Z',
          valueSampledData: { origin: { value: 0.5, unit }, period: 10, factor: 0.01, dimensions: 1, data },
        },
      },
      // FEV1 post-bronchodilator (LOINC 20155-8) from the device: sets the state, value not imported.
      { resource: { resourceType: 'Observation', status: 'final', code: { coding: [{ system: 'http://loinc.org', code: '20155-8' }] }, valueQuantity: { value: 3.1, unit: 'L' } } },
      { resource: { resourceType: 'Observation', status: 'final', code: { coding: [{ system: 'http://loinc.org', code: '8302-2' }] }, valueQuantity: { value: 181, unit: 'cm' } } },
    ],
  };
}


describe('HL7 FHIR R4 Bundle', () => {
  it('round-trips a session through buildFhirBundle and parseFhirBundle', () => {
    const doc = sessionOf();
    const back = parseFhirBundle(JSON.parse(JSON.stringify(buildFhirBundle(doc))));
    expect(back.metadata).toEqual(doc.metadata);
    expect(back.efforts.map((e) => [e.label, e.signal, e.sampleRateHz])).toEqual(doc.efforts.map((e) => [e.label, e.signal, e.sampleRateHz]));
    back.efforts.forEach((effort, i) => {
      expect(effort.values).toHaveLength(doc.efforts[i].values.length);
      effort.values.forEach((v, j) => expect(Math.abs(v - doc.efforts[i].values[j])).toBeLessThan(1e-9));
    });
  });

  it('gives the same analysis from FHIR as from the session document', () => {
    const doc = sessionOf();
    const viaFhir = sessionDocumentToRecordings(parseFhirBundle(buildFhirBundle(doc)));
    const direct = sessionDocumentToRecordings(doc);
    const fvc = (r: (typeof direct)[number]) => analyzeRecording(r, DEFAULT_ENGINE_PARAMETERS).metrics.fvcL;
    expect(fvc(viaFhir[1])).toBeCloseTo(fvc(direct[1]), 9);
  });

  it('writes waveforms with our effort-signal coding and UCUM units', () => {
    const bundle = buildFhirBundle(sessionOf()) as Json;
    const observation = bundle.entry.find((e: Json) => e.resource.valueSampledData).resource;
    expect(observation.code.coding[0]).toEqual({ system: EFFORT_SIGNAL_SYSTEM, code: 'volume-time' });
    expect(observation.valueSampledData.origin.code).toBe('L');
    expect(observation.valueSampledData.period).toBe(10);
  });

  it('reads middleware data: value = origin + factor x datum, period in ms, flow from the unit L/s', () => {
    const doc = parseFhirBundle(middlewareBundle('0 10 20 -50'));
    expect(doc.efforts[0]).toMatchObject({ label: 'forced expiration', signal: 'flow', sampleRateHz: 100, values: [0.5, 0.6, 0.7, 0] });
    expect(doc.metadata.subjectCode).toBe('SUBJ-9');
    expect(doc.metadata.bronchodilator).toBe('post');
    expect(doc.metadata.testedAt).toBe('2025-05-02T10:15:00Z');
    expect(doc.metadata.demographics).toEqual({ sex: 'male', heightCm: 181 });
    expect(JSON.stringify(doc)).not.toContain('Never-Read');
  });

  const bad: [string, Json, string, RegExp][] = [
    ['not a Bundle', { resourceType: 'Patient' }, 'fhir-bundle', /not a FHIR Bundle/],
    ['a Bundle without waveforms', { resourceType: 'Bundle', entry: [] }, 'fhir-no-efforts', /no Observation with valueSampledData/],
    ['an error marker', middlewareBundle('0 10 E 20'), 'fhir-data', /blow-a: sample 3 is "E" \(an error\)/],
    ['a below-detection marker', middlewareBundle('0 L 20'), 'fhir-data', /sample 2 is "L" \(below the detection limit\)/],
    ['an above-detection marker', middlewareBundle('U 0 20'), 'fhir-data', /sample 1 is "U" \(above the detection limit\)/],
    ['a non-numeric datum', middlewareBundle('0 1,5 20'), 'fhir-data', /sample 2 "1,5" is not a number/],
    ['an unknown unit', middlewareBundle('0 10 20', 'mL'), 'fhir-signal', /origin unit is "mL"; expected "L" \(volume\) or "L\/s" \(flow\)/],
  ];

  it.each(bad)('rejects %s', (_name, json, code, message) => {
    const error = errorOf(() => parseFhirBundle(json, 'bundle.json'));
    expect(error.code).toBe(code);
    expect(error.message).toMatch(/^bundle\.json: /);
    expect(error.message).toMatch(message);
  });
});
