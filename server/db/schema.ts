import { sql } from 'drizzle-orm';
import { index, integer, real, sqliteTable, text, uniqueIndex } from 'drizzle-orm/sqlite-core';

const createdAt = () =>
  text('created_at')
    .notNull()
    .default(sql`(strftime('%Y-%m-%dT%H:%M:%fZ','now'))`);

/** People who sign in. Never deleted: deactivated, so their audit rows stay attributed. */
export const users = sqliteTable('users', {
  id: text('id').primaryKey(),
  email: text('email').notNull().unique(),
  name: text('name').notNull(),
  active: integer('active', { mode: 'boolean' }).notNull().default(true),
  createdAt: createdAt(),
});

export const studies = sqliteTable('studies', {
  id: text('id').primaryKey(),
  code: text('code').notNull().unique(),
  title: text('title').notNull(),
  sponsor: text('sponsor').notNull(),
  indication: text('indication').notNull(),
  protocolRuleSetId: text('protocol_rule_set_id').notNull(),
  /** Reference equations for predicted values (ecsc-1993 is built in; the others need an imported set). */
  equationsId: text('equations_id').notNull().default('ecsc-1993'),
  /** The imported reference set the study pins (null: the built-in set named by equationsId). */
  referenceSetId: text('reference_set_id'),
  /** Pinned rule-set version; null means the latest in protocols/. */
  protocolVersion: integer('protocol_version'),
  /** single, dual-all (two reads of every session) or dual-sample (two reads of a sampled fraction). */
  readDesign: text('read_design', { enum: ['single', 'dual-all', 'dual-sample'] })
    .notNull()
    .default('single'),
  /** Fraction of sessions read twice under dual-sample. */
  dualSampleFraction: real('dual_sample_fraction').notNull().default(0),
  /** JSON of what readers and monitors may see (visit, timepoint, pre/post; monitors blinded to treatment). */
  blindingJson: text('blinding_json')
    .notNull()
    .default('{"readersSeeVisit":true,"readersSeeTimepoint":true,"readersSeeBronchodilator":true,"monitorsBlinded":true}'),
  /** Target time from a checked file to feedback at the site. */
  turnaroundHours: integer('turnaround_hours').notNull().default(48),
  updatedAt: text('updated_at'),
  createdAt: createdAt(),
});

export const sites = sqliteTable(
  'sites',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    number: text('number').notNull(),
    name: text('name').notNull(),
    countryCode: text('country_code').notNull(),
    timeZone: text('time_zone').notNull(),
    createdAt: createdAt(),
  },
  (table) => [uniqueIndex('sites_study_number').on(table.studyId, table.number)],
);

/** One role held by one user in one study; a null site means the whole study. */
export const roleAssignments = sqliteTable(
  'role_assignments',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    role: text('role').notNull(),
    siteId: text('site_id').references(() => sites.id),
    createdAt: createdAt(),
  },
  (table) => [
    index('role_assignments_user').on(table.userId),
    uniqueIndex('role_assignments_unique').on(table.userId, table.studyId, table.role, table.siteId),
  ],
);

/** Browser sessions; only a hash of the cookie value is stored. */
export const authSessions = sqliteTable(
  'auth_sessions',
  {
    idHash: text('id_hash').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    csrfToken: text('csrf_token').notNull(),
    /** When the identity provider last authenticated the user (OIDC auth_time), ISO UTC. */
    authTime: text('auth_time').notNull(),
    createdAt: createdAt(),
    lastSeenAt: text('last_seen_at').notNull(),
    expiresAt: text('expires_at').notNull(),
    endedAt: text('ended_at'),
  },
  (table) => [index('auth_sessions_user').on(table.userId)],
);

/** Sign-ins in flight: PKCE verifier, state and nonce between redirect and callback. */
export const loginAttempts = sqliteTable('login_attempts', {
  state: text('state').primaryKey(),
  codeVerifier: text('code_verifier').notNull(),
  nonce: text('nonce').notNull(),
  returnTo: text('return_to').notNull(),
  createdAt: createdAt(),
});

/** Bearer tokens for automation; only a hash is stored. */
export const apiTokens = sqliteTable(
  'api_tokens',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    tokenHash: text('token_hash').notNull().unique(),
    label: text('label').notNull(),
    createdAt: createdAt(),
    lastUsedAt: text('last_used_at'),
    revokedAt: text('revoked_at'),
  },
  (table) => [index('api_tokens_user').on(table.userId)],
);

/** Visits of a study's schedule, with their windows in days around the planned day. */
export const visits = sqliteTable(
  'visits',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    code: text('code').notNull(),
    name: text('name').notNull(),
    ordinal: integer('ordinal').notNull(),
    dayOffset: integer('day_offset').notNull(),
    windowBeforeDays: integer('window_before_days').notNull(),
    windowAfterDays: integer('window_after_days').notNull(),
  },
  (table) => [uniqueIndex('visits_study_code').on(table.studyId, table.code)],
);

/** Timepoints tested within a visit (e.g. pre-dose, 2 h post-dose). */
export const timepoints = sqliteTable(
  'timepoints',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    code: text('code').notNull(),
    name: text('name').notNull(),
    ordinal: integer('ordinal').notNull(),
  },
  (table) => [uniqueIndex('timepoints_study_code').on(table.studyId, table.code)],
);

/** Trial subjects by pseudonymous code only: no names, no dates of birth. */
export const subjects = sqliteTable(
  'subjects',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    siteId: text('site_id')
      .notNull()
      .references(() => sites.id),
    code: text('code').notNull(),
    createdAt: createdAt(),
  },
  (table) => [uniqueIndex('subjects_study_code').on(table.studyId, table.code), index('subjects_site').on(table.siteId)],
);

/** One spirometry session: one subject, visit, timepoint and pre/post bronchodilator set. */
export const testSessions = sqliteTable(
  'test_sessions',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    siteId: text('site_id')
      .notNull()
      .references(() => sites.id),
    subjectId: text('subject_id')
      .notNull()
      .references(() => subjects.id),
    visitId: text('visit_id')
      .notNull()
      .references(() => visits.id),
    timepointId: text('timepoint_id')
      .notNull()
      .references(() => timepoints.id),
    bronchodilator: text('bronchodilator', { enum: ['pre', 'post'] }).notNull(),
    /** ISO UTC; the site's IANA zone beside it gives the local time. */
    testedAt: text('tested_at').notNull(),
    timeZone: text('time_zone').notNull(),
    ageYears: real('age_years').notNull(),
    heightCm: real('height_cm').notNull(),
    weightKg: real('weight_kg'),
    sex: text('sex', { enum: ['female', 'male'] }).notNull(),
    ethnicity: text('ethnicity'),
    technicianCode: text('technician_code').notNull(),
    deviceManufacturer: text('device_manufacturer'),
    deviceModel: text('device_model'),
    deviceSerialNumber: text('device_serial_number'),
    status: text('status').notNull(),
    /** JSON array of the reasons the last file was rejected. */
    rejectionReasons: text('rejection_reasons').notNull().default('[]'),
    /** JSON of the engine's session-level first pass, null before a checked file. */
    checkJson: text('check_json'),
    fev1Grade: text('fev1_grade'),
    fvcGrade: text('fvc_grade'),
    currentUploadId: text('current_upload_id'),
    /** Whether this session needs two independent reads (dual design, or drawn in the dual sample). */
    dualRead: integer('dual_read', { mode: 'boolean' }).notNull().default(false),
    /** When the final read's feedback was released to the site. */
    feedbackReleasedAt: text('feedback_released_at'),
    registeredBy: text('registered_by')
      .notNull()
      .references(() => users.id),
    registeredAt: text('registered_at').notNull(),
    updatedAt: text('updated_at').notNull(),
  },
  (table) => [
    uniqueIndex('test_sessions_slot').on(table.subjectId, table.visitId, table.timepointId, table.bronchodilator),
    index('test_sessions_study_site').on(table.studyId, table.siteId),
    // With the current file: the reading queue counts its backlog from this index alone.
    index('test_sessions_status').on(table.studyId, table.status, table.currentUploadId),
    // Finds the sessions under a visit lock (a visit of the schedule, across subjects).
    index('test_sessions_visit').on(table.visitId),
  ],
);

/** Every file received, kept with its checksum whether or not it could be used. */
export const uploads = sqliteTable(
  'uploads',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    sessionId: text('session_id')
      .notNull()
      .references(() => testSessions.id),
    objectKey: text('object_key').notNull().unique(),
    sha256: text('sha256').notNull(),
    sizeBytes: integer('size_bytes').notNull(),
    originalName: text('original_name').notNull(),
    contentType: text('content_type').notNull(),
    detectedFormat: text('detected_format'),
    uploadedBy: text('uploaded_by')
      .notNull()
      .references(() => users.id),
    receivedAt: text('received_at').notNull(),
    outcome: text('outcome', { enum: ['checked', 'rejected'] }).notNull(),
    /** JSON array of reasons when rejected. */
    errors: text('errors').notNull().default('[]'),
    processedAt: text('processed_at').notNull(),
  },
  (table) => [
    uniqueIndex('uploads_study_sha256').on(table.studyId, table.sha256),
    index('uploads_session').on(table.sessionId),
    // Walks a study's files in check order: the reading queue's order (due = checked + turnaround).
    index('uploads_study_processed').on(table.studyId, table.processedAt, table.sessionId),
  ],
);

/** One forced expiratory effort of a checked file: the engine's metrics, findings and suggested verdicts. */
export const efforts = sqliteTable(
  'efforts',
  {
    id: text('id').primaryKey(),
    sessionId: text('session_id')
      .notNull()
      .references(() => testSessions.id),
    uploadId: text('upload_id')
      .notNull()
      .references(() => uploads.id),
    effortIndex: integer('effort_index').notNull(),
    label: text('label').notNull(),
    signal: text('signal', { enum: ['volume', 'flow'] }).notNull(),
    sampleRateHz: real('sample_rate_hz').notNull(),
    sampleCount: integer('sample_count').notNull(),
    fev1L: real('fev1_l'),
    fvcL: real('fvc_l').notNull(),
    pefLPerS: real('pef_l_per_s').notNull(),
    suggestedFev1Verdict: text('suggested_fev1_verdict').notNull(),
    suggestedFvcVerdict: text('suggested_fvc_verdict').notNull(),
    /** JSON of every metric (EffortMetrics). */
    metricsJson: text('metrics_json').notNull(),
    /** JSON array of findings with their numbers. */
    findingsJson: text('findings_json').notNull(),
    /** JSON of the reasons behind each suggested verdict. */
    verdictReasonsJson: text('verdict_reasons_json').notNull(),
  },
  (table) => [uniqueIndex('efforts_upload_index').on(table.uploadId, table.effortIndex), index('efforts_session').on(table.sessionId)],
);

/** Calibration (syringe) checks of site spirometers, entered or carried in session files. */
export const calibrationChecks = sqliteTable(
  'calibration_checks',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    siteId: text('site_id')
      .notNull()
      .references(() => sites.id),
    deviceSerialNumber: text('device_serial_number').notNull(),
    syringeVolumeL: real('syringe_volume_l').notNull(),
    measuredVolumeL: real('measured_volume_l').notNull(),
    checkedAt: text('checked_at').notNull(),
    errorPercent: real('error_percent').notNull(),
    withinTolerance: integer('within_tolerance', { mode: 'boolean' }).notNull(),
    source: text('source', { enum: ['entered', 'upload'] }).notNull(),
    uploadId: text('upload_id').references(() => uploads.id),
    enteredBy: text('entered_by')
      .notNull()
      .references(() => users.id),
    enteredAt: text('entered_at').notNull(),
  },
  (table) => [index('calibration_checks_site').on(table.siteId, table.checkedAt)],
);

/** Locks on data: a whole study, a site, a subject, a visit or one session. */
export const dataLocks = sqliteTable(
  'data_locks',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    scope: text('scope', { enum: ['study', 'site', 'subject', 'visit', 'session'] }).notNull(),
    /** Id of the locked site, subject, visit or session; the study id for a study lock. */
    scopeId: text('scope_id').notNull(),
    reason: text('reason').notNull(),
    lockedBy: text('locked_by')
      .notNull()
      .references(() => users.id),
    lockedAt: text('locked_at').notNull(),
    unlockedBy: text('unlocked_by').references(() => users.id),
    unlockedAt: text('unlocked_at'),
    unlockReason: text('unlock_reason'),
  },
  (table) => [index('data_locks_scope').on(table.studyId, table.scope, table.scopeId)],
);

/**
 * The audit trail: append-only (triggers refuse UPDATE and DELETE), each row chained to the one
 * before by a SHA-256 hash so that tampering with stored rows is detectable.
 */
export const auditEvents = sqliteTable(
  'audit_events',
  {
    sequence: integer('sequence').primaryKey({ autoIncrement: true }),
    at: text('at').notNull(),
    userId: text('user_id').notNull(),
    role: text('role').notNull(),
    studyId: text('study_id'),
    siteId: text('site_id'),
    entity: text('entity').notNull(),
    entityId: text('entity_id').notNull(),
    action: text('action').notNull(),
    oldValue: text('old_value'),
    newValue: text('new_value'),
    reason: text('reason'),
    previousHash: text('previous_hash').notNull(),
    hash: text('hash').notNull(),
  },
  (table) => [index('audit_events_study').on(table.studyId, table.sequence), index('audit_events_entity').on(table.entity, table.entityId)],
);

/** Messages Tidemark sent (or tried to send) to a user; also shown in the app. */
export const userMessages = sqliteTable(
  'user_messages',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    toAddress: text('to_address').notNull(),
    subject: text('subject').notNull(),
    body: text('body').notNull(),
    link: text('link'),
    createdAt: text('created_at').notNull(),
    delivery: text('delivery', { enum: ['pending', 'sent', 'failed'] }).notNull(),
    failure: text('failure'),
  },
  (table) => [index('user_messages_user').on(table.userId, table.createdAt)],
);

/** Reference-equation lookup files imported by an admin, kept in storage with their checksum. */
export const referenceSets = sqliteTable('reference_sets', {
  id: text('id').primaryKey(),
  equationsId: text('equations_id').notNull(),
  label: text('label').notNull(),
  originalName: text('original_name').notNull(),
  objectKey: text('object_key').notNull().unique(),
  sha256: text('sha256').notNull(),
  sizeBytes: integer('size_bytes').notNull(),
  /** JSON of the validation: sheets/columns found, ages covered, spot checks with expected and found values. */
  validationJson: text('validation_json').notNull(),
  importedBy: text('imported_by')
    .notNull()
    .references(() => users.id),
  importedAt: text('imported_at').notNull(),
});

/** One over-read of one session's checked file by one reader: first, second (dual design) or adjudication. */
export const reads = sqliteTable(
  'reads',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    sessionId: text('session_id')
      .notNull()
      .references(() => testSessions.id),
    uploadId: text('upload_id')
      .notNull()
      .references(() => uploads.id),
    readerId: text('reader_id')
      .notNull()
      .references(() => users.id),
    kind: text('kind', { enum: ['first', 'second', 'adjudication'] }).notNull(),
    /** What the reader sees instead of site, subject and dates: unique per read. */
    blindCode: text('blind_code').notNull().unique(),
    status: text('status', { enum: ['in-progress', 'withdrawn', 'signed'] }).notNull(),
    /** Optimistic concurrency: every saved change increments it. */
    version: integer('version').notNull().default(1),
    claimedAt: text('claimed_at').notNull(),
    dueAt: text('due_at').notNull(),
    updatedAt: text('updated_at').notNull(),
    /** JSON of the reader's choices beyond verdicts: reported-value overrides, session grade notes. */
    selectionJson: text('selection_json').notNull().default('{}'),
    /** Plain-words feedback for the site about the whole session. */
    feedbackText: text('feedback_text').notNull().default(''),
    /** JSON of the recomputed result at signing: grades, reported values, repeatability. */
    resultJson: text('result_json'),
    signatureId: text('signature_id'),
    signedAt: text('signed_at'),
  },
  (table) => [
    index('reads_session').on(table.sessionId),
    index('reads_reader').on(table.readerId, table.status),
    // The reads that count toward a session's over-read, by study, session and reader: the queue's eligibility.
    index('reads_live_over_reads')
      .on(table.studyId, table.sessionId, table.readerId)
      .where(sql`${table.kind} <> 'adjudication' and ${table.status} <> 'withdrawn'`),
  ],
);

/** A reader's verdicts on one effort, beside the engine's suggestion they started from. */
export const readVerdicts = sqliteTable(
  'read_verdicts',
  {
    readId: text('read_id')
      .notNull()
      .references(() => reads.id),
    effortId: text('effort_id')
      .notNull()
      .references(() => efforts.id),
    effortIndex: integer('effort_index').notNull(),
    fev1Verdict: text('fev1_verdict').notNull(),
    fvcVerdict: text('fvc_verdict').notNull(),
    suggestedFev1Verdict: text('suggested_fev1_verdict').notNull(),
    suggestedFvcVerdict: text('suggested_fvc_verdict').notNull(),
    /** JSON array of finding codes the reader confirms or adds. */
    findingsJson: text('findings_json').notNull().default('[]'),
    comment: text('comment').notNull().default(''),
  },
  (table) => [uniqueIndex('read_verdicts_read_effort').on(table.readId, table.effortIndex)],
);

/**
 * Electronic signatures (21 CFR 11.50/11.70): who, the printed name, when, what it means, and a
 * hash of the signed record's content so that a later change shows the signature as no longer valid.
 */
export const signatures = sqliteTable(
  'signatures',
  {
    id: text('id').primaryKey(),
    userId: text('user_id')
      .notNull()
      .references(() => users.id),
    printedName: text('printed_name').notNull(),
    meaning: text('meaning', { enum: ['authored', 'reviewed', 'approved', 'locked', 'unlocked', 'released'] }).notNull(),
    signedAt: text('signed_at').notNull(),
    recordType: text('record_type').notNull(),
    recordId: text('record_id').notNull(),
    contentHash: text('content_hash').notNull(),
    /** When the identity provider last authenticated the signer (the re-authentication behind this signature). */
    authTime: text('auth_time').notNull(),
    method: text('method').notNull(),
  },
  (table) => [index('signatures_record').on(table.recordType, table.recordId)],
);

/** A question about a session to its site, from a reader or a data manager. */
export const queries = sqliteTable(
  'queries',
  {
    id: text('id').primaryKey(),
    studyId: text('study_id')
      .notNull()
      .references(() => studies.id),
    siteId: text('site_id')
      .notNull()
      .references(() => sites.id),
    sessionId: text('session_id')
      .notNull()
      .references(() => testSessions.id),
    /** The read it came from, when a reader opened it (for the reader to find it again, blinded). */
    readId: text('read_id').references(() => reads.id),
    openedBy: text('opened_by')
      .notNull()
      .references(() => users.id),
    openedRole: text('opened_role').notNull(),
    question: text('question').notNull(),
    /** Whether the site is asked to repeat the test within the visit window. */
    requestRepeat: integer('request_repeat', { mode: 'boolean' }).notNull().default(false),
    status: text('status', { enum: ['open', 'answered', 'closed'] }).notNull(),
    openedAt: text('opened_at').notNull(),
    closedAt: text('closed_at'),
    closedBy: text('closed_by').references(() => users.id),
  },
  (table) => [index('queries_session').on(table.sessionId), index('queries_study_status').on(table.studyId, table.status)],
);

/** The messages of a query thread: the question's follow-ups and the site's answers. */
export const queryMessages = sqliteTable(
  'query_messages',
  {
    id: text('id').primaryKey(),
    queryId: text('query_id')
      .notNull()
      .references(() => queries.id),
    authorId: text('author_id')
      .notNull()
      .references(() => users.id),
    authorRole: text('author_role').notNull(),
    body: text('body').notNull(),
    createdAt: text('created_at').notNull(),
  },
  (table) => [index('query_messages_query').on(table.queryId, table.createdAt)],
);
