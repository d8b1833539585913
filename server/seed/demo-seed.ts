/**
 * @packageDocumentation
 * The demo study for `npm start`: the HLX-201 study, its schedule, sites, people and subjects
 * written straight to the database (with their audit rows), then months of spirometry sessions
 * registered and uploaded through the real services, so that every stored file, effort, grade
 * and calibration check is what the pipeline made of it. Curves come from the engine's seeded
 * generator: the same demo every time, with only the calendar following today's date.
 */
import { strToU8, zipSync, type Zippable } from 'fflate';
import { eq } from 'drizzle-orm';
import type { Logger } from 'pino';
import type { RegisterSession } from '../../shared/contracts/sessions.js';
import { buildFhirBundle } from '../../shared/spirometry/fhir-bundle.js';
import type { Recording } from '../../shared/spirometry/model.js';
import { ECSC_1993_EQUATIONS, ecsc1993Predicted } from '../../shared/spirometry/reference/ecsc-1993.js';
import { SESSION_DOCUMENT_FORMAT, recordingToSessionEffort, type SessionDocument } from '../../shared/spirometry/session-document.js';
import { effortToCsv, generateSession, type EffortSpec } from '../../shared/spirometry/synthetic/curve-generator.js';
import {
  obstructiveBlowDurationS,
  obstructiveEffortSpec,
  obstructiveShapeValues,
  type ObstructiveShape,
} from '../../shared/spirometry/synthetic/obstructive-effort.js';
import { SeededRandom } from '../../shared/spirometry/synthetic/seeded-random.js';
import type { AppServices } from '../app.js';
import { AuditRepository } from '../audit/audit-repository.js';
import { AuditTrail, SYSTEM_ACTOR, type AuditActor } from '../audit/audit-trail.js';
import type { TidemarkDatabase } from '../db/database.js';
import { roleAssignments, sites, studies, subjects, timepoints, users, visits } from '../db/schema.js';
import { AppError } from '../http/app-error.js';
import type { ReceivedFile } from '../uploads/upload-service.js';
import {
  DEMO_SESSION_EVENTS,
  DEMO_SESSIONS_PER_VISIT,
  DEMO_SITE_PRACTICE,
  DEMO_SITES,
  DEMO_STUDY,
  DEMO_SUBJECTS,
  DEMO_TIMEPOINTS,
  DEMO_USERS,
  DEMO_VISITS,
  type DemoEffortFault,
  type DemoFileFormat,
  type DemoSessionEvent,
  type DemoSubject,
  type DemoTimepointCode,
  type DemoVisitCode,
} from './demo-study.js';

const DAY_MS = 86_400_000;
/** The newest session is this many days old, so that no test time is in the future at any hour in any zone. */
const NEWEST_SESSION_DAYS_AGO = 3;
const SAMPLE_RATE_HZ = 100;
/** Below the 100 Hz minimum of ATS/ERS 2019 (from memory): the intentionally rejected file. */
const TOO_SLOW_SAMPLE_RATE_HZ = 50;
const CLEAN_EFFORTS = 3;
/** ATS/ERS 2019 asks for no more than 8 efforts in a pre-bronchodilator set (from memory). */
const MAX_EFFORTS = 8;
const FAULTS: readonly DemoEffortFault[] = ['slow-start', 'cough-first-second', 'early-end', 'glottic-first-second', 'submaximal'];
/** How far below the best FEV1 the other efforts of a poorly repeatable session fall (L): beyond the 0.150 L of grades A and B. */
const POOR_REPEATABILITY_SHORTFALLS_L = [0.2, 0.24, 0.22, 0.27, 0.21, 0.25, 0.23];

const visitId = (code: string) => `${DEMO_STUDY.id}-visit-${code}`;
const timepointId = (code: string) => `${DEMO_STUDY.id}-timepoint-${code}`;
const subjectId = (code: string) => `${DEMO_STUDY.id}-subject-${code}`;

/**
 * Writes the demo study, its sites, schedule, subjects, users and role assignments once, with
 * one audit row for each thing created, in one transaction; a second run changes nothing.
 */
export function seedDemoStudy(db: TidemarkDatabase, now = new Date()): boolean {
  const existing = db.select({ id: studies.id }).from(studies).where(eq(studies.id, DEMO_STUDY.id)).get();
  if (existing) return false;
  const audit = new AuditTrail(new AuditRepository(db), () => new Date());
  const studyId = DEMO_STUDY.id;
  audit.write(SYSTEM_ACTOR, (record) => {
    const seeded = (entity: string, entityId: string, newValue: object, siteId: string | null = null) =>
      record({ studyId, siteId, entity, entityId, action: 'seed', newValue });

    db.insert(studies).values(DEMO_STUDY).run();
    seeded('study', studyId, DEMO_STUDY);
    for (const site of DEMO_SITES) {
      const row = { ...site, studyId };
      db.insert(sites).values(row).run();
      seeded('site', site.id, row, site.id);
    }
    DEMO_VISITS.forEach((visit, index) => {
      const row = { ...visit, id: visitId(visit.code), studyId, ordinal: index + 1 };
      db.insert(visits).values(row).run();
      seeded('visit', row.id, row);
    });
    DEMO_TIMEPOINTS.forEach((timepoint, index) => {
      const row = { ...timepoint, id: timepointId(timepoint.code), studyId, ordinal: index + 1 };
      db.insert(timepoints).values(row).run();
      seeded('timepoint', row.id, row);
    });
    for (const subject of DEMO_SUBJECTS) {
      // Enrolled on the morning of screening, so that the subject list and the sessions agree.
      const screeningDay = visitCalendar(subject, now).get('SCR')!;
      const enrolledAt = new Date(siteTime(screeningDay, 8 * 60, siteOf(subject).timeZone)).toISOString();
      const row = { id: subjectId(subject.code), studyId, siteId: subject.siteId, code: subject.code, createdAt: enrolledAt };
      db.insert(subjects).values(row).run();
      seeded('subject', row.id, row, subject.siteId);
    }
    for (const user of DEMO_USERS) {
      const row = { id: user.id, email: user.email, name: user.name };
      if (db.insert(users).values(row).onConflictDoNothing().run().changes > 0) seeded('user', user.id, row);
      for (const grant of user.roles) {
        for (const siteId of grant.siteIds ?? [null]) {
          const assignment = { id: `${user.id}:${studyId}:${grant.role}:${siteId ?? 'all'}`, userId: user.id, studyId, role: grant.role, siteId };
          db.insert(roleAssignments).values(assignment).run();
          seeded('role-assignment', assignment.id, assignment, siteId);
        }
      }
    }
  });
  return true;
}

/** One planned demo session: what is registered, and what the site sends for it. */
interface PlannedSession {
  readonly subject: DemoSubject;
  readonly visitCode: DemoVisitCode;
  readonly timepointCode: DemoTimepointCode;
  readonly bronchodilator: 'pre' | 'post';
  /** ISO 8601 at the site's offset. */
  readonly testedAt: string;
  readonly technicianCode: string;
  readonly format: DemoFileFormat;
  readonly seed: number;
  readonly event?: DemoSessionEvent;
}

/**
 * Registers and uploads the demo sessions through the real services, as each site's
 * coordinator, when the demo study has none yet. A file the pipeline judges otherwise than the
 * scenario meant is logged as a warning; any other failure stops the start. Test times are
 * dated back from `now`, which must be the app's clock: the service refuses times after it.
 */
export async function seedDemoSessions(services: AppServices, logger: Logger, now = new Date()): Promise<void> {
  const startedMs = performance.now();
  const studyId = DEMO_STUDY.id;
  if (services.sessions.schedule(studyId).visits.length === 0) {
    logger.warn('the demo study has no visit schedule (seeded by an earlier version): delete the data folder to seed the demo sessions');
    return;
  }
  const existing = services.sessions.page(studyId, { allSites: true }, { sort: 'registeredAt', direction: 'desc', page: 0, pageSize: 1 });
  if (existing.total > 0) return;

  const tally = { sessions: 0, checked: 0, rejected: 0, awaitingFile: 0, uploads: 0, rejectedFiles: 0, efforts: 0, calibrationChecks: 0 };
  const plans = planDemoSessions(now).sort((a, b) => Date.parse(a.testedAt) - Date.parse(b.testedAt));
  for (const plan of plans) {
    const practice = DEMO_SITE_PRACTICE[plan.subject.siteId];
    const actor: AuditActor = { userId: practice.coordinatorId, role: 'site-coordinator' };
    const session = services.sessions.register(actor, studyId, plan.subject.siteId, registrationOf(plan));
    tally.sessions++;
    if (plan.event?.kind === 'awaiting-file') {
      tally.awaitingFile++;
      continue;
    }
    const { files, calibrationChecks } = demoFiles(plan);
    let checkedEfforts: number | undefined;
    for (const file of files) {
      tally.uploads++;
      checkedEfforts = await receiveDemoFile(services, actor, session.id, file, logger);
      if (checkedEfforts === undefined) tally.rejectedFiles++;
    }
    if (checkedEfforts === undefined) {
      tally.rejected++;
    } else {
      tally.checked++;
      tally.efforts += checkedEfforts;
      tally.calibrationChecks += calibrationChecks;
    }
  }
  logger.info({ ...tally, elapsedMs: Math.round(performance.now() - startedMs) }, 'seeded the demo sessions through the upload pipeline');
}

/** Uploads one file; answers the number of efforts checked, or undefined when the pipeline rejected it. */
async function receiveDemoFile(
  services: AppServices,
  actor: AuditActor,
  sessionId: string,
  file: ReceivedFile & { readonly meantToFail: boolean },
  logger: Logger,
): Promise<number | undefined> {
  try {
    const result = await services.uploads.receive(actor, DEMO_STUDY.id, sessionId, { allSites: true }, file);
    if (file.meantToFail) logger.warn({ file: file.originalName }, 'a demo file meant to be rejected was accepted');
    return result.session.efforts.length;
  } catch (error) {
    // The pipeline stores a file it cannot use and answers 422 file-rejected: for the bad demo files that is the point.
    if (!(error instanceof AppError && error.code === 'file-rejected')) throw error;
    if (!file.meantToFail) logger.warn({ file: file.originalName, reason: error.message }, 'a demo file meant to be checked was rejected');
    return undefined;
  }
}

function siteOf(subject: DemoSubject) {
  return DEMO_SITES.find((site) => site.id === subject.siteId)!;
}

/** The subject's number as a seed: 101-003 is 101003. */
const subjectSeed = (subject: DemoSubject) => Number(subject.code.replace('-', ''));

/**
 * The days (days since 1970-01-01) on which the subject came for each visit done by now: the
 * planned day moved within its window by a fixed amount per subject, then off the weekend to the
 * Friday before. Which visits count as done does not depend on the weekday, so the demo holds the
 * same sessions whatever day it starts on.
 */
function visitCalendar(subject: DemoSubject, now: Date): Map<DemoVisitCode, number> {
  const today = Math.floor(now.getTime() / DAY_MS);
  const randomisationDay = today - subject.randomisedDaysAgo;
  const calendar = new Map<DemoVisitCode, number>();
  DEMO_VISITS.forEach((visit, index) => {
    const random = new SeededRandom(subjectSeed(subject) * 31 + index);
    // Study day 1 is randomisation and there is no day 0.
    const planned = randomisationDay + (visit.dayOffset > 0 ? visit.dayOffset - 1 : visit.dayOffset);
    const shift = Math.round(random.uniform(-visit.windowBeforeDays, visit.windowAfterDays) / 2);
    const nominal = planned + shift;
    if (nominal > today - NEWEST_SESSION_DAYS_AGO) return;
    const weekday = new Date(nominal * DAY_MS).getUTCDay();
    calendar.set(visit.code, nominal - (weekday === 6 ? 1 : weekday === 0 ? 2 : 0));
  });
  return calendar;
}

/** Every session of the demo, in subject and schedule order. */
function planDemoSessions(now: Date): PlannedSession[] {
  const plans: PlannedSession[] = [];
  const sessionsPerSite = new Map<string, number>();
  for (const subject of DEMO_SUBJECTS) {
    const practice = DEMO_SITE_PRACTICE[subject.siteId];
    const { timeZone } = siteOf(subject);
    for (const [visitCode, day] of visitCalendar(subject, now)) {
      const visitOrdinal = DEMO_VISITS.findIndex((visit) => visit.code === visitCode) + 1;
      const random = new SeededRandom(subjectSeed(subject) * 97 + visitOrdinal);
      // Pre-dose tests start between 08:00 and 10:30, in 5-minute steps.
      const preDoseMinutes = 8 * 60 + 5 * Math.floor(random.uniform(0, 31));
      const technicianCode = practice.technicianCodes[(subjectSeed(subject) + visitOrdinal) % practice.technicianCodes.length];
      DEMO_SESSIONS_PER_VISIT[visitCode].forEach(({ timepointCode, bronchodilator }, index) => {
        // Post-bronchodilator 25 min after the pre set (salbutamol takes 10-15 min); post-dose 2 h after the dose that follows the pre-dose set.
        const minutes = preDoseMinutes + (timepointCode === 'POST-BD' ? 25 : timepointCode === '2H-POST-DOSE' ? 135 : 0);
        const count = sessionsPerSite.get(subject.siteId) ?? 0;
        sessionsPerSite.set(subject.siteId, count + 1);
        plans.push({
          subject,
          visitCode,
          timepointCode,
          bronchodilator,
          testedAt: siteTime(day, minutes, timeZone),
          technicianCode,
          format: practice.formats[count % practice.formats.length],
          seed: subjectSeed(subject) * 100 + visitOrdinal * 10 + index,
          event: DEMO_SESSION_EVENTS[`${subject.code}/${visitCode}/${timepointCode}`],
        });
      });
    }
  }
  return plans;
}

function registrationOf(plan: PlannedSession): RegisterSession {
  const { subject } = plan;
  const { softwareVersion: _software, ...device } = DEMO_SITE_PRACTICE[subject.siteId].device;
  return {
    subjectCode: subject.code,
    visitCode: plan.visitCode,
    timepointCode: plan.timepointCode,
    bronchodilator: plan.bronchodilator,
    testedAt: plan.testedAt,
    demographics: { ageYears: subject.ageYears, heightCm: subject.heightCm, weightKg: subject.weightKg, sex: subject.sex },
    technicianCode: plan.technicianCode,
    device,
  };
}

/** The files the site sends for a session, in order, and how many calibration checks the good one carries. */
function demoFiles(plan: PlannedSession): { files: (ReceivedFile & { meantToFail: boolean })[]; calibrationChecks: number } {
  const { subject, event } = plan;
  const practice = DEMO_SITE_PRACTICE[subject.siteId];
  const baseName = `${subject.code}_${plan.visitCode}_${plan.timepointCode}`;
  const recordings = demoRecordings(plan, event?.kind === 'slow-sampling' ? TOO_SLOW_SAMPLE_RATE_HZ : SAMPLE_RATE_HZ);
  const metadata: SessionDocument['metadata'] = {
    subjectCode: subject.code,
    visit: plan.visitCode,
    timepoint: plan.timepointCode,
    bronchodilator: plan.bronchodilator,
    testedAt: plan.testedAt,
    timeZone: siteOf(subject).timeZone,
    device: practice.device,
    technicianCode: plan.technicianCode,
    demographics: { ageYears: subject.ageYears, heightCm: subject.heightCm, weightKg: subject.weightKg, sex: subject.sex },
  };
  // The day's syringe check, 40 min before the first test, in files of screening and week-4 mornings.
  const carriesCalibration =
    practice.exportsCalibrationChecks && plan.format !== 'fhir-bundle' && plan.timepointCode === 'PRE-DOSE' && ['SCR', 'V3'].includes(plan.visitCode);
  const calibrationRandom = new SeededRandom(plan.seed + 17);
  const calibrationChecks = carriesCalibration
    ? [
        {
          syringeVolumeL: 3,
          measuredVolumeL: event?.kind === 'calibration-off' ? event.measuredVolumeL : Math.round(300 + calibrationRandom.normal(0, 1.2)) / 100,
          checkedAt: new Date(Date.parse(plan.testedAt) - 40 * 60_000).toISOString(),
        },
      ]
    : undefined;
  const document: SessionDocument = {
    format: SESSION_DOCUMENT_FORMAT,
    metadata,
    efforts: recordings.map((recording) => {
      const effort = recordingToSessionEffort(recording);
      // Devices export a fixed number of decimals; a hundredth of a millilitre is plenty.
      return { ...effort, values: effort.values.map((value) => Math.round(value * 1e5) / 1e5) };
    }),
    ...(calibrationChecks && { calibrationChecks }),
  };

  if (event?.kind === 'text-cell') {
    // One effort exported alone, with the device's error code in place of a sample at row 401.
    const lines = effortToCsv(recordings[0]).split('\n');
    lines[400] = `${lines[400].split(',')[0]},ERR`;
    return { files: [{ originalName: `${baseName}_trial1.csv`, contentType: 'text/csv', bytes: Buffer.from(lines.join('\n')), meantToFail: true }], calibrationChecks: 0 };
  }
  if (event?.kind === 'wrong-subject-first') {
    const wrong = { ...document, metadata: { ...metadata, subjectCode: event.namedSubjectCode } };
    return {
      files: [
        { ...effortZip(wrong, recordings, baseName), meantToFail: true },
        { ...effortZip(document, recordings, baseName), meantToFail: false },
      ],
      calibrationChecks: calibrationChecks?.length ?? 0,
    };
  }
  const meantToFail = event?.kind === 'slow-sampling';
  const file = {
    'session-json': () => ({ originalName: `${baseName}.json`, contentType: 'application/json', bytes: Buffer.from(JSON.stringify(document)) }),
    'effort-zip': () => effortZip(document, recordings, baseName),
    'fhir-bundle': () => ({ originalName: `${baseName}.fhir.json`, contentType: 'application/fhir+json', bytes: Buffer.from(JSON.stringify(buildFhirBundle(document))) }),
  }[meantToFail ? 'session-json' : plan.format]();
  return { files: [{ ...file, meantToFail }], calibrationChecks: plan.format === 'fhir-bundle' ? 0 : (calibrationChecks?.length ?? 0) };
}

/** A zip of one CSV per effort with the session's metadata and calibration checks in session.json. */
function effortZip(document: SessionDocument, recordings: readonly Recording[], baseName: string): ReceivedFile {
  const entries: Zippable = {
    'session.json': strToU8(JSON.stringify({ metadata: document.metadata, calibrationChecks: document.calibrationChecks ?? [] })),
  };
  recordings.forEach((recording, index) => {
    entries[`trial-${index + 1}.csv`] = strToU8(effortToCsv(recording));
  });
  return { originalName: `${baseName}.zip`, contentType: 'application/zip', bytes: Buffer.from(zipSync(entries, { level: 6 })) };
}

/**
 * The efforts of one session from the seeded generator: the subject's own obstructive lung (one
 * drawn shape per subject) sized to the session's FEV1, three clean efforts (two, now and then,
 * at a hurried site) and the faulty ones it let through, and, in a poorly repeatable session, every effort after the best one
 * 0.20-0.27 L of FEV1 short of it.
 */
function demoRecordings(plan: PlannedSession, sampleRateHz: number): Recording[] {
  const { subject } = plan;
  const practice = DEMO_SITE_PRACTICE[subject.siteId];
  const random = new SeededRandom(plan.seed);
  // Day-to-day variation is shared by the sessions of one visit: a post set differs from its pre set by the drug alone.
  const dayRandom = new SeededRandom(Math.floor(plan.seed / 10));
  const lung = obstructiveEffortSpec(subjectSeed(subject));
  const predictedFev1L = ecsc1993Predicted(ECSC_1993_EQUATIONS[subject.sex].fev1!, subject.ageYears, subject.heightCm);
  const treated = ['V3', 'V4', 'V5'].includes(plan.visitCode);
  const fev1L =
    (predictedFev1L * subject.fev1PercentPredicted) / 100 +
    (treated ? subject.troughChangeL : 0) +
    (plan.timepointCode === 'POST-BD' ? random.uniform(0.15, 0.25) : 0) +
    (plan.timepointCode === '2H-POST-DOSE' ? 0.8 * subject.troughChangeL + 0.04 : 0) +
    dayRandom.normal(0, 0.04);
  const scale = fev1L / obstructiveShapeValues(lung).fev1L;
  const shape: ObstructiveShape = { ...lung, pefLPerS: lung.pefLPerS * scale, fvcL: lung.fvcL * scale };

  // A hurried technician sometimes stops after two good blows.
  const cleanEfforts = random.next() < practice.faultyEffortChance / 2 ? CLEAN_EFFORTS - 1 : CLEAN_EFFORTS;
  const faults: (DemoEffortFault | undefined)[] = Array.from({ length: cleanEfforts }, () => undefined);
  for (let draw = 0; draw < MAX_EFFORTS - CLEAN_EFFORTS; draw++) {
    // Every session has at least three efforts (ATS/ERS 2019, from memory).
    if (faults.length >= CLEAN_EFFORTS && random.next() >= practice.faultyEffortChance) continue;
    const fault = FAULTS[Math.floor(random.uniform(0, FAULTS.length))];
    faults.splice(Math.floor(random.uniform(0, faults.length + 1)), 0, fault);
  }
  const poorlyRepeatable = random.next() < practice.poorRepeatabilityChance;
  const bestIndex = faults.indexOf(undefined);
  const base: EffortSpec = {
    ...shape,
    blowDurationS: obstructiveBlowDurationS(shape, random),
    sampleRateHz,
    signal: practice.signal,
    tidalBreaths: practice.tidalBreaths,
    inspirationAfter: practice.signal === 'flow',
    pauseS: random.uniform(0.3, 0.9),
  };
  const perEffort = faults.map((fault, index): Partial<EffortSpec> => ({
    label: `Trial ${index + 1}`,
    ...(fault && { faults: [fault] }),
    // A subject who stops early gives up 3-5 s into the blow.
    ...(fault === 'early-end' && { faultTimesS: { earlyEnd: 3 + (index % 3) } }),
    ...(poorlyRepeatable && index !== bestIndex && shapeShortOfFev1(shape, fev1L - POOR_REPEATABILITY_SHORTFALLS_L[index % POOR_REPEATABILITY_SHORTFALLS_L.length])),
  }));
  return generateSession({ efforts: faults.length, base, fvcSdL: 0.025, pefSdFraction: 0.03, perEffort }, plan.seed).map((effort) => effort.recording);
}

/**
 * PEF and FVC of a smaller blow of the same lung with the given FEV1 (closed form, bisection).
 * PEF falls half as much as FVC, so that the smaller blow is not also read as submaximal.
 */
function shapeShortOfFev1(shape: ObstructiveShape, fev1L: number): Pick<ObstructiveShape, 'pefLPerS' | 'fvcL'> {
  const scaled = (factor: number) => ({ ...shape, fvcL: shape.fvcL * factor, pefLPerS: (shape.pefLPerS * (1 + factor)) / 2 });
  let low = 0.3;
  let high = 1;
  for (let step = 0; step < 40; step++) {
    const middle = (low + high) / 2;
    if (obstructiveShapeValues(scaled(middle)).fev1L > fev1L) high = middle;
    else low = middle;
  }
  const { pefLPerS, fvcL } = scaled(low);
  return { pefLPerS, fvcL };
}

/** A wall-clock time at a site on a given day as ISO 8601 with the zone's offset that day, e.g. 2026-09-14T09:30:00+02:00. */
function siteTime(day: number, minutesAfterMidnight: number, timeZone: string): string {
  const wallAsUtcMs = day * DAY_MS + minutesAfterMidnight * 60_000;
  // The offset at the wall time read as UTC, then at the instant that gives: right on either side of a change of clocks.
  const offsetMinutes = utcOffsetMinutes(wallAsUtcMs - utcOffsetMinutes(wallAsUtcMs, timeZone) * 60_000, timeZone);
  const sign = offsetMinutes < 0 ? '-' : '+';
  const hours = String(Math.floor(Math.abs(offsetMinutes) / 60)).padStart(2, '0');
  const minutes = String(Math.abs(offsetMinutes) % 60).padStart(2, '0');
  return `${new Date(wallAsUtcMs).toISOString().slice(0, 19)}${sign}${hours}:${minutes}`;
}

/** Offset of the zone from UTC at an instant (minutes east of Greenwich). */
function utcOffsetMinutes(instantMs: number, timeZone: string): number {
  const name = new Intl.DateTimeFormat('en-US', { timeZone, timeZoneName: 'longOffset' })
    .formatToParts(new Date(instantMs))
    .find((part) => part.type === 'timeZoneName')?.value;
  const match = /GMT([+-])(\d{2}):(\d{2})/.exec(name ?? '');
  if (!match) return 0;
  return (match[1] === '-' ? -1 : 1) * (Number(match[2]) * 60 + Number(match[3]));
}
