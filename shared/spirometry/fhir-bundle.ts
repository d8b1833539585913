/**
 * @packageDocumentation
 * HL7 FHIR R4 Bundle of one session, as Tidemark reads and writes it.
 *
 * Waveforms (our convention; LOINC has no code for a forced-expiration waveform):
 * each effort is an Observation whose `code` has the coding
 * `{ system: "urn:tidemark:fhir:effort-signal", code: "volume-time" | "flow-time" }` and whose
 * `valueSampledData` holds the samples: value = origin.value + factor x datum, period in
 * milliseconds, dimensions 1, data space-separated decimals. The signal kind is taken from
 * that coding, or else from the origin's UCUM unit: `L` = volume (expired positive),
 * `L/s` = flow (expiration positive). Data with the FHIR markers `E` (error), `L` (below
 * detection) or `U` (above detection) is rejected: a gap cannot be analysed. The effort
 * label is `identifier[0].value`, else `code.text`, else the resource id.
 *
 * LOINC codes read: FEV1 pre/post bronchodilator 20157-4 / 20155-8 and FVC pre/post
 * 19876-2 / 19874-7 set the session's bronchodilator state (their values are not
 * imported: Tidemark recomputes from the waveforms); body height 8302-2 (cm), body weight
 * 29463-7 (kg) and age 30525-0 (years) give demographics; FEV1 20150-9, FVC 19868-9,
 * FEV1/FVC 19926-5 and FET 65819-5 are recognised and ignored. Patient.gender gives sex.
 *
 * The subject is kept only as a pseudonymous code: Patient.identifier[0].value, else the
 * Observation subject's identifier value, else the id in `subject.reference`. Names,
 * birth dates and addresses are never read. Visit, timepoint, bronchodilator state and
 * technician may also come from extensions `urn:tidemark:fhir:<field>` (valueString) on
 * the effort Observations, which {@link buildFhirBundle} writes.
 */
import { SpirometryInputError } from './model.js';
import {
  SESSION_DOCUMENT_FORMAT,
  type SessionDocument,
  type SessionEffort,
  type SessionMetadata,
  parseSessionDocument,
} from './session-document.js';

/** Coding system of our effort waveform Observations (`volume-time` | `flow-time`). */
export const EFFORT_SIGNAL_SYSTEM = 'urn:tidemark:fhir:effort-signal';
const EXTENSION_PREFIX = 'urn:tidemark:fhir:';
const LOINC = 'http://loinc.org';
const UCUM = 'http://unitsofmeasure.org';
const BRONCHODILATOR_LOINC: Readonly<Record<string, 'pre' | 'post'>> = {
  '20157-4': 'pre',
  '19876-2': 'pre',
  '20155-8': 'post',
  '19874-7': 'post',
};
const DEMOGRAPHIC_LOINC = { heightCm: '8302-2', weightKg: '29463-7', ageYears: '30525-0' } as const;

type Json = Record<string, unknown>;
const obj = (x: unknown): Json | undefined => (typeof x === 'object' && x !== null && !Array.isArray(x) ? (x as Json) : undefined);
const arr = (x: unknown): unknown[] => (Array.isArray(x) ? x : []);
const str = (x: unknown): string | undefined => (typeof x === 'string' && x.trim() !== '' ? x.trim() : undefined);
const num = (x: unknown): number | undefined => (typeof x === 'number' && Number.isFinite(x) ? x : undefined);
const codings = (concept: unknown): Json[] => arr(obj(concept)?.['coding']).map(obj).filter((c): c is Json => !!c);

/**
 * Reads an HL7 FHIR R4 Bundle into a session document, validated
 * like any session JSON. Throws {@link SpirometryInputError} (`fhir-bundle`, `fhir-no-efforts`,
 * `fhir-data`, `fhir-signal`, `fhir-period`) naming the Observation and what is wrong.
 */
export function parseFhirBundle(json: unknown, fileName = 'bundle.json'): SessionDocument {
  const fail = (code: string, message: string, column?: string): never => {
    throw new SpirometryInputError(code, `${fileName}: ${message}`, { file: fileName, column });
  };
  const bundle = obj(json);
  if (bundle?.['resourceType'] !== 'Bundle') fail('fhir-bundle', 'not a FHIR Bundle (resourceType must be "Bundle")');
  const resources = arr(bundle?.['entry'])
    .map((e) => obj(obj(e)?.['resource']))
    .filter((r): r is Json => !!r);
  const byReference = new Map<string, Json>();
  arr(bundle?.['entry']).forEach((e) => {
    const entry = obj(e);
    const resource = obj(entry?.['resource']);
    if (!resource) return;
    const fullUrl = str(entry?.['fullUrl']);
    if (fullUrl) byReference.set(fullUrl, resource);
    if (str(resource['id'])) byReference.set(`${resource['resourceType']}/${resource['id']}`, resource);
  });

  const metadata: SessionMetadata = {};
  const demographics: Record<string, unknown> = {};
  const efforts: SessionEffort[] = [];
  const patient = resources.find((r) => r['resourceType'] === 'Patient');
  if (patient) {
    const subjectCode = str(obj(arr(patient['identifier'])[0])?.['value']) ?? str(patient['id']);
    if (subjectCode) metadata.subjectCode = subjectCode;
    const gender = patient['gender'];
    if (gender === 'female' || gender === 'male') demographics['sex'] = gender;
  }

  resources
    .filter((r) => r['resourceType'] === 'Observation')
    .forEach((observation, position) => {
      const name = str(observation['id']) ?? `Observation #${position + 1}`;
      const codes = codings(observation['code']);
      for (const c of codes.filter((c) => c['system'] === LOINC)) {
        const loinc = String(c['code']);
        if (BRONCHODILATOR_LOINC[loinc]) metadata.bronchodilator ??= BRONCHODILATOR_LOINC[loinc];
        for (const [field, code] of Object.entries(DEMOGRAPHIC_LOINC)) {
          const value = num(obj(observation['valueQuantity'])?.['value']);
          if (loinc === code && value !== undefined) demographics[field] = value;
        }
      }
      const sampled = obj(observation['valueSampledData']);
      if (!sampled) return;
      efforts.push(readEffort(observation, sampled, codes, name, fail));
      readObservationContext(observation, metadata, byReference);
    });
  if (efforts.length === 0) {
    fail('fhir-no-efforts', 'the Bundle holds no Observation with valueSampledData (one per effort)');
  }
  if (Object.keys(demographics).length > 0) metadata.demographics = demographics as SessionMetadata['demographics'];
  return parseSessionDocument({ format: SESSION_DOCUMENT_FORMAT, metadata, efforts }, fileName);
}

function readEffort(
  observation: Json,
  sampled: Json,
  codes: Json[],
  name: string,
  fail: (code: string, message: string, column?: string) => never,
): SessionEffort {
  const origin = obj(sampled['origin']);
  const unit = str(origin?.['code']) ?? str(origin?.['unit']);
  const declared = codes.find((c) => c['system'] === EFFORT_SIGNAL_SYSTEM)?.['code'];
  const signal =
    declared === 'volume-time' ? 'volume' : declared === 'flow-time' ? 'flow' : unit === 'L' ? 'volume' : unit === 'L/s' ? 'flow' : undefined;
  if (!signal) {
    fail('fhir-signal', `${name}: cannot tell volume from flow: origin unit is ${unit ? `"${unit}"` : 'missing'}; expected "L" (volume) or "L/s" (flow)`, name);
  }
  const periodMs = num(sampled['period']);
  if (periodMs === undefined || periodMs <= 0) fail('fhir-period', `${name}: valueSampledData.period must be a positive number of milliseconds`, name);
  const dimensions = sampled['dimensions'] ?? 1;
  if (dimensions !== 1) fail('fhir-data', `${name}: valueSampledData.dimensions is ${String(dimensions)}; only 1 is supported`, name);
  const originValue = num(origin?.['value']) ?? 0;
  const factor = num(sampled['factor']) ?? 1;
  const tokens = (str(sampled['data']) ?? '').split(/\s+/).filter((t) => t !== '');
  const values = new Array<number>(tokens.length);
  for (let i = 0; i < tokens.length; i++) {
    const token = tokens[i];
    if (token === 'E' || token === 'L' || token === 'U') {
      const meaning = token === 'E' ? 'an error' : token === 'L' ? 'below the detection limit' : 'above the detection limit';
      fail('fhir-data', `${name}: sample ${i + 1} is "${token}" (${meaning}); a waveform with gaps cannot be analysed`, name);
    }
    const datum = Number(token);
    if (!Number.isFinite(datum)) fail('fhir-data', `${name}: sample ${i + 1} "${token.slice(0, 20)}" is not a number`, name);
    values[i] = originValue + factor * datum;
  }
  const label = str(obj(arr(observation['identifier'])[0])?.['value']) ?? str(obj(observation['code'])?.['text']) ?? name;
  return { label, signal: signal as 'volume' | 'flow', sampleRateHz: 1000 / (periodMs as number), values };
}

function readObservationContext(observation: Json, metadata: SessionMetadata, byReference: Map<string, Json>): void {
  const subject = obj(observation['subject']);
  const reference = str(subject?.['reference']);
  metadata.subjectCode ??= str(obj(subject?.['identifier'])?.['value']) ?? (reference?.startsWith('Patient/') ? reference.slice(8) : undefined);
  const effective = str(observation['effectiveDateTime']);
  // Our session format needs an offset; a FHIR dateTime without one is left out rather than guessed.
  if (effective && /T\d\d:\d\d(:\d\d(\.\d+)?)?(Z|[+-]\d\d:\d\d)$/.test(effective)) metadata.testedAt ??= effective;
  for (const ext of arr(observation['extension']).map(obj)) {
    const url = str(ext?.['url']);
    const value = str(ext?.['valueString']);
    if (!url?.startsWith(EXTENSION_PREFIX) || !value) continue;
    const field = url.slice(EXTENSION_PREFIX.length);
    if (field === 'visit' || field === 'timepoint' || field === 'technicianCode' || field === 'timeZone') metadata[field] ??= value;
    if (field === 'bronchodilator' && (value === 'pre' || value === 'post')) metadata.bronchodilator ??= value;
  }
  if (!metadata.device) {
    const deviceRef = obj(observation['device']);
    const device = byReference.get(str(deviceRef?.['reference']) ?? '');
    const model = str(obj(arr(device?.['deviceName'])[0])?.['name']) ?? str(deviceRef?.['display']);
    const manufacturer = str(device?.['manufacturer']);
    const serialNumber = str(device?.['serialNumber']);
    if (model || manufacturer || serialNumber) {
      metadata.device = { ...(model && { model }), ...(manufacturer && { manufacturer }), ...(serialNumber && { serialNumber }) };
    }
  }
}

/** Shortest decimal text of a number, for compact SampledData. */
const decimal = (x: number): string => String(Math.round(x * 1e6) / 1e6);

/**
 * Writes a session document as a FHIR R4 Bundle of our convention (see the file's
 * JSDoc); the inverse of {@link parseFhirBundle} for metadata that FHIR can carry.
 * Calibration checks are not written.
 */
export function buildFhirBundle(doc: SessionDocument): Json {
  const m = doc.metadata;
  const entries: Json[] = [];
  const subject = m.subjectCode ? { reference: 'Patient/subject' } : undefined;
  if (m.subjectCode) {
    const sex = m.demographics?.sex;
    entries.push({ resource: { resourceType: 'Patient', id: 'subject', identifier: [{ value: m.subjectCode }], ...(sex && { gender: sex }) } });
  }
  const device = m.device ? { display: m.device.model ?? m.device.manufacturer ?? 'spirometer', reference: 'Device/spirometer' } : undefined;
  if (m.device) {
    entries.push({
      resource: {
        resourceType: 'Device',
        id: 'spirometer',
        ...(m.device.manufacturer && { manufacturer: m.device.manufacturer }),
        ...(m.device.serialNumber && { serialNumber: m.device.serialNumber }),
        ...(m.device.model && { deviceName: [{ name: m.device.model, type: 'model-name' }] }),
      },
    });
  }
  const extension = (['visit', 'timepoint', 'technicianCode', 'timeZone', 'bronchodilator'] as const)
    .filter((field) => typeof m[field] === 'string')
    .map((field) => ({ url: EXTENSION_PREFIX + field, valueString: m[field] as string }));
  const common = {
    status: 'final',
    ...(subject && { subject }),
    ...(m.testedAt && { effectiveDateTime: m.testedAt }),
    ...(device && { device }),
  };
  doc.efforts.forEach((effort, i) => {
    if (effort.startTimeS) throw new RangeError('FHIR SampledData has no start time; efforts must start at 0 s');
    entries.push({
      resource: {
        resourceType: 'Observation',
        id: `effort-${i + 1}`,
        identifier: [{ value: effort.label }],
        ...(extension.length > 0 && { extension }),
        ...common,
        code: {
          coding: [{ system: EFFORT_SIGNAL_SYSTEM, code: effort.signal === 'volume' ? 'volume-time' : 'flow-time' }],
          text: effort.label,
        },
        valueSampledData: {
          origin: { value: 0, unit: effort.signal === 'volume' ? 'L' : 'L/s', system: UCUM, code: effort.signal === 'volume' ? 'L' : 'L/s' },
          period: 1000 / effort.sampleRateHz,
          dimensions: 1,
          data: effort.values.map(decimal).join(' '),
        },
      },
    });
  });
  for (const [field, loinc] of Object.entries(DEMOGRAPHIC_LOINC)) {
    const value = m.demographics?.[field as keyof typeof DEMOGRAPHIC_LOINC];
    if (value === undefined) continue;
    const unit = field === 'heightCm' ? 'cm' : field === 'weightKg' ? 'kg' : 'a';
    entries.push({
      resource: { resourceType: 'Observation', id: field, ...common, code: { coding: [{ system: LOINC, code: loinc }] }, valueQuantity: { value, unit, system: UCUM, code: unit } },
    });
  }
  return { resourceType: 'Bundle', type: 'collection', entry: entries };
}
