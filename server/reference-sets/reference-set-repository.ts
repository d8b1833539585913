import { desc, eq } from 'drizzle-orm';
import type { TidemarkDatabase } from '../db/database.js';
import { referenceSets, studies, testSessions, users } from '../db/schema.js';

export type ReferenceSetRow = typeof referenceSets.$inferSelect;

/** A reference set with the name of the person who imported it. */
export interface ReferenceSetListRow {
  readonly set: ReferenceSetRow;
  readonly importedByName: string;
}

/** Which equations a study uses: the columns of `studies` this feature owns. */
export interface StudyEquationsRow {
  readonly id: string;
  readonly code: string;
  readonly equationsId: string;
  readonly referenceSetId: string | null;
}

/** Imported reference sets, and the study columns that pin one. */
export class ReferenceSetRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** Every imported set, newest first. */
  all(): ReferenceSetListRow[] {
    return this.db
      .select({ set: referenceSets, importedByName: users.name })
      .from(referenceSets)
      .innerJoin(users, eq(users.id, referenceSets.importedBy))
      .orderBy(desc(referenceSets.importedAt))
      .all();
  }

  find(id: string): ReferenceSetRow | undefined {
    return this.db.select().from(referenceSets).where(eq(referenceSets.id, id)).get();
  }

  findBySha256(sha256: string): ReferenceSetRow | undefined {
    return this.db.select().from(referenceSets).where(eq(referenceSets.sha256, sha256)).get();
  }

  insert(row: ReferenceSetRow): void {
    this.db.insert(referenceSets).values(row).run();
  }

  /** Object keys of every set, for the start-up sweep of interrupted imports. */
  allObjectKeys(): Set<string> {
    return new Set(this.db.select({ key: referenceSets.objectKey }).from(referenceSets).all().map((row) => row.key));
  }

  findStudy(studyId: string): StudyEquationsRow | undefined {
    return this.db
      .select({ id: studies.id, code: studies.code, equationsId: studies.equationsId, referenceSetId: studies.referenceSetId })
      .from(studies)
      .where(eq(studies.id, studyId))
      .get();
  }

  /** Whether any session was registered in the study, so that changes to it need a reason. */
  studyHasSessions(studyId: string): boolean {
    return this.db.select({ id: testSessions.id }).from(testSessions).where(eq(testSessions.studyId, studyId)).limit(1).get() !== undefined;
  }

  updateStudyEquations(studyId: string, change: { equationsId: string; referenceSetId: string | null; updatedAt: string }): void {
    this.db.update(studies).set(change).where(eq(studies.id, studyId)).run();
  }
}
