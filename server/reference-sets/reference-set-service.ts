import { createHash, randomUUID } from 'node:crypto';
import type { Logger } from 'pino';
import {
  EQUATIONS_SHORT_NAMES,
  type ImportReferenceSetFields,
  type PinReferenceSet,
  type ReferenceSet,
  type ReferenceSetValidation,
  type StudyReferenceSet,
  importableEquationsIdSchema,
  referenceSetValidationSchema,
  studyEquationsIdSchema,
} from '../../shared/contracts/reference-sets.js';
import { SpirometryInputError } from '../../shared/spirometry/model.js';
import { ecsc1993Equations } from '../../shared/spirometry/reference/ecsc-1993.js';
import type { ReferenceEquations } from '../../shared/spirometry/reference/reference-equations.js';
import type { AuditActor, AuditTrail } from '../audit/audit-trail.js';
import type { Principal } from '../auth/principal.js';
import { AppError } from '../http/app-error.js';
import type { ObjectStorage } from '../storage/object-storage.js';
import type { ReferenceSetRepository, ReferenceSetRow, StudyEquationsRow } from './reference-set-repository.js';
import { equationsFromReferenceFile, validateReferenceFile } from './reference-set-validation.js';

/** Where imported reference files live in the bucket: one object per set, named by its id. */
export const REFERENCE_SET_KEY_PREFIX = 'reference-sets/';

/** The equations a study computes predicted values with, or why there are none. */
export type StudyEquations = ReferenceEquations | { readonly unavailable: string };

/** A received reference file before anything is parsed. */
export interface ReceivedReferenceFile {
  readonly originalName: string;
  readonly contentType: string;
  readonly bytes: Buffer;
}

const sha256Of = (bytes: Buffer) => createHash('sha256').update(bytes).digest('hex');

/**
 * Reference sets: the publisher's file is stored with its SHA-256, validated, and recorded only
 * when every check passes; a study pins one, and {@link equationsForStudy} turns the pinned,
 * re-verified file into the engine's equations.
 */
export class ReferenceSetService {
  /** Equations per reference set id; a stored set never changes, so entries never go stale. */
  private readonly equationsCache = new Map<string, Promise<StudyEquations>>();

  constructor(
    private readonly repository: ReferenceSetRepository,
    private readonly audit: AuditTrail,
    private readonly storage: ObjectStorage,
    private readonly clock: () => Date,
    private readonly logger: Logger,
  ) {}

  /** Every imported set, newest first. */
  list(): ReferenceSet[] {
    return this.repository.all().map(({ set, importedByName }) => this.toReferenceSet(set, importedByName));
  }

  /** What was checked when a set was imported. */
  validation(referenceSetId: string): ReferenceSetValidation {
    return this.validationOf(this.requireSet(referenceSetId));
  }

  /**
   * Imports a reference file: stores the original with its SHA-256 first, then validates it. A
   * file with problems is refused with 422 listing every one, and its stored object is removed,
   * so that nothing of it remains; a valid file gets its row and audit event in one transaction.
   */
  async import(principal: Principal | undefined, file: ReceivedReferenceFile, fields: ImportReferenceSetFields): Promise<ReferenceSet> {
    const actor = this.importer(principal);
    const sha256 = sha256Of(file.bytes);
    this.assertNotImported(sha256);
    const id = randomUUID();
    const objectKey = `${REFERENCE_SET_KEY_PREFIX}${id}`;
    await this.storage.put(objectKey, file.bytes, file.contentType || 'application/octet-stream', {
      'reference-set-id': id,
      'equations-id': fields.equationsId,
      sha256,
      'original-name': encodeURIComponent(file.originalName),
      'imported-by': actor.userId,
    });
    try {
      const { validation, equations } = await validateReferenceFile(fields.equationsId, file.originalName, file.bytes);
      if (!equations) {
        const count = validation.problems.length;
        throw new AppError(
          422,
          'reference-set-invalid',
          `${file.originalName} cannot be used as ${EQUATIONS_SHORT_NAMES[fields.equationsId]} tables: ${count} ${count === 1 ? 'problem' : 'problems'}. Nothing was kept.`,
          { problems: validation.problems, validation },
        );
      }
      const row: ReferenceSetRow = {
        id,
        equationsId: fields.equationsId,
        label: fields.label || `${EQUATIONS_SHORT_NAMES[fields.equationsId]}: ${file.originalName}`,
        originalName: file.originalName,
        objectKey,
        sha256,
        sizeBytes: file.bytes.length,
        validationJson: JSON.stringify(validation),
        importedBy: actor.userId,
        importedAt: this.clock().toISOString(),
      };
      this.audit.write(actor, (record) => {
        this.assertNotImported(sha256);
        this.repository.insert(row);
        const { validationJson: _validation, ...imported } = row;
        record({ entity: 'reference-set', entityId: id, action: 'import', newValue: { ...imported, validation: validation.summary } });
      });
      this.equationsCache.set(id, Promise.resolve(equations));
      return this.toReferenceSet(row, principal!.user.name);
    } catch (error) {
      // No row points at the object: a refused or failed import leaves no stored file behind.
      await this.storage.delete(objectKey).catch((deleteError: unknown) =>
        this.logger.warn({ err: deleteError, objectKey }, 'could not remove the object of a refused reference set'),
      );
      throw error;
    }
  }

  /** Which equations a study uses, and whether changing them needs a reason. */
  studyReferenceSet(studyId: string): StudyReferenceSet {
    return this.toStudyReferenceSet(this.requireStudy(studyId));
  }

  /**
   * Pins an imported set to a study (null: the built-in ECSC 1993 equations only); the study's
   * equations follow the set. Audited old → new; once the study has sessions a reason is required.
   */
  pin(actor: AuditActor, studyId: string, input: PinReferenceSet): StudyReferenceSet {
    this.requireStudy(studyId);
    const set = input.referenceSetId === null ? null : this.repository.find(input.referenceSetId);
    if (input.referenceSetId !== null && !set) {
      throw AppError.badRequest(`There is no imported reference set "${input.referenceSetId}".`, undefined, 'reference-set-unknown');
    }
    const next = { referenceSetId: set?.id ?? null, equationsId: set?.equationsId ?? 'ecsc-1993' };
    return this.audit.write(actor, (record) => {
      const current = this.requireStudy(studyId);
      if (current.referenceSetId === next.referenceSetId && current.equationsId === next.equationsId) return this.toStudyReferenceSet(current);
      if (this.repository.studyHasSessions(studyId) && !input.reason) {
        throw AppError.badRequest(
          `Study ${current.code} already has sessions: give a reason for changing its reference equations.`,
          undefined,
          'reason-required',
        );
      }
      this.repository.updateStudyEquations(studyId, { ...next, updatedAt: this.clock().toISOString() });
      record({
        studyId,
        entity: 'study',
        entityId: studyId,
        action: 'pin-reference-set',
        oldValue: { referenceSetId: current.referenceSetId, equationsId: current.equationsId },
        newValue: next,
        reason: input.reason ?? null,
      });
      return this.toStudyReferenceSet({ ...current, ...next });
    });
  }

  /**
   * The equations for a study's predicted values: the pinned set's stored file, checked against
   * its SHA-256 and loaded once per set; the built-in ECSC 1993 when the study uses those; or
   * `{ unavailable }` with the reason in plain words, for predicted values to show as unavailable.
   */
  async equationsForStudy(studyId: string): Promise<StudyEquations> {
    const study = this.requireStudy(studyId);
    if (study.referenceSetId === null) {
      if (study.equationsId === 'ecsc-1993') return ecsc1993Equations;
      const name = this.equationsName(study.equationsId);
      return {
        unavailable: `Study ${study.code} uses the ${name} equations, but no imported ${name} tables are pinned to it: a study admin imports the publisher's file under Study setup, Reference sets, and pins it to the study.`,
      };
    }
    const set = this.repository.find(study.referenceSetId);
    if (!set) {
      return { unavailable: `The reference set pinned to study ${study.code} is not on record; a study admin must pin an imported set again.` };
    }
    let loading = this.equationsCache.get(set.id);
    if (!loading) {
      loading = this.loadEquations(set);
      this.equationsCache.set(set.id, loading);
    }
    const equations = await loading;
    // A failure may pass (storage back up); the next call tries again.
    if ('unavailable' in equations) this.equationsCache.delete(set.id);
    return equations;
  }

  /**
   * Start-up reconciliation: an object under reference-sets/ that no row names was stored by an
   * import that never finished (the process stopped before validation ended). Its importer got
   * no answer, so it is removed. Returns how many were removed.
   */
  async removeInterruptedImports(): Promise<number> {
    const known = this.repository.allObjectKeys();
    let removed = 0;
    for await (const key of this.storage.keys(REFERENCE_SET_KEY_PREFIX)) {
      if (known.has(key)) continue;
      await this.storage.delete(key);
      this.logger.warn({ key }, 'removed the stored file of an interrupted reference-set import');
      removed++;
    }
    return removed;
  }

  private async loadEquations(set: ReferenceSetRow): Promise<StudyEquations> {
    const name = this.equationsName(set.equationsId);
    let bytes: Buffer;
    try {
      bytes = await this.storage.get(set.objectKey);
    } catch (error) {
      // Storage unreachable or the object gone: predicted values wait, the caller's page does not fail.
      this.logger.error({ err: error, referenceSetId: set.id }, 'reference set could not be read from storage');
      return { unavailable: `The ${name} tables ("${set.label}") could not be read from storage just now; predicted values show once it is reachable again.` };
    }
    if (sha256Of(bytes) !== set.sha256) {
      this.logger.error({ referenceSetId: set.id, objectKey: set.objectKey }, 'stored reference set does not match its SHA-256');
      return {
        unavailable: `The stored ${name} tables ("${set.label}") no longer match the SHA-256 recorded at import, so they are not used; a study admin must import the publisher's file again.`,
      };
    }
    try {
      return await equationsFromReferenceFile(importableEquationsIdSchema.parse(set.equationsId), set.originalName, bytes);
    } catch (error) {
      // The file passed validation at import; a loader refusing it now means the loaders changed.
      if (!(error instanceof SpirometryInputError)) throw error;
      this.logger.error({ err: error, referenceSetId: set.id }, 'stored reference set no longer loads');
      return { unavailable: `The ${name} tables ("${set.label}") cannot be loaded: ${error.message}` };
    }
  }

  private importer(principal: Principal | undefined): AuditActor {
    if (!principal) throw AppError.unauthenticated();
    if (!principal.assignments.some((assignment) => assignment.role === 'study-admin')) {
      throw AppError.forbidden('Importing reference equations needs the study admin role in at least one study.');
    }
    return { userId: principal.user.id, role: 'study-admin' };
  }

  private assertNotImported(sha256: string): void {
    const existing = this.repository.findBySha256(sha256);
    if (existing) {
      throw AppError.conflict(
        `This file was already imported as "${existing.label}" on ${existing.importedAt.slice(0, 10)} (SHA-256 ${sha256.slice(0, 12)}…).`,
        { referenceSetId: existing.id, label: existing.label },
        'duplicate-reference-set',
      );
    }
  }

  private requireSet(referenceSetId: string): ReferenceSetRow {
    const set = this.repository.find(referenceSetId);
    if (!set) throw AppError.notFound('There is no such reference set.');
    return set;
  }

  private requireStudy(studyId: string): StudyEquationsRow {
    const study = this.repository.findStudy(studyId);
    if (!study) throw AppError.notFound('There is no such study.');
    return study;
  }

  private equationsName(equationsId: string): string {
    const known = studyEquationsIdSchema.safeParse(equationsId);
    return known.success ? EQUATIONS_SHORT_NAMES[known.data] : equationsId;
  }

  private validationOf(set: ReferenceSetRow): ReferenceSetValidation {
    return referenceSetValidationSchema.parse(JSON.parse(set.validationJson));
  }

  private toReferenceSet(set: ReferenceSetRow, importedByName: string): ReferenceSet {
    return {
      id: set.id,
      equationsId: importableEquationsIdSchema.parse(set.equationsId),
      label: set.label,
      originalName: set.originalName,
      sha256: set.sha256,
      sizeBytes: set.sizeBytes,
      importedBy: { userId: set.importedBy, name: importedByName },
      importedAt: set.importedAt,
      validationSummary: this.validationOf(set).summary,
    };
  }

  private toStudyReferenceSet(study: StudyEquationsRow): StudyReferenceSet {
    return {
      studyId: study.id,
      equationsId: studyEquationsIdSchema.parse(study.equationsId),
      referenceSetId: study.referenceSetId,
      reasonRequired: this.repository.studyHasSessions(study.id),
    };
  }
}
