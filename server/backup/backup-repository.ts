import type { TidemarkDatabase } from '../db/database.js';

/** An object in storage that a database row names. */
export interface ReferencedObject {
  readonly key: string;
  /** `table.column` naming the object. */
  readonly referencedBy: string;
  /** The SHA-256 the row recorded when the object was stored, where the table keeps one of the stored bytes. */
  readonly recordedSha256: string | null;
  /** The content type the row recorded, where the table keeps one. */
  readonly contentType: string | null;
}

/**
 * Tables whose `sha256` column is the SHA-256 of the stored object's bytes, taken before the
 * row was written. Other tables naming objects are checked against the backup manifest only,
 * since their checksum columns (if any) may cover something else.
 */
const TABLES_RECORDING_OBJECT_SHA256 = new Set(['uploads', 'reference_sets']);
/**
 * Storage prefix of released datasets. A backup copies everything under it even when no row
 * names an object, so a release kept only in storage is not lost.
 */
export const RELEASE_KEY_PREFIX = 'releases/';
/** The column name every table that points into storage uses. */
const OBJECT_KEY_COLUMN = 'object_key';

/** Reads what a backup and a restore need from a Tidemark database, whatever migrations it has. */
export class BackupRepository {
  constructor(private readonly db: TidemarkDatabase) {}

  /** Every table of the application (not SQLite's or the migrator's own), in name order. */
  tableNames(): string[] {
    return this.db.$client
      .prepare(
        `select name from sqlite_master
          where type = 'table' and name not like 'sqlite\\_%' escape '\\' and name not like '\\_\\_drizzle%' escape '\\'
          order by name`,
      )
      .pluck()
      .all() as string[];
  }

  /** Row count of every application table. */
  rowCounts(): Record<string, number> {
    const counts: Record<string, number> = {};
    for (const table of this.tableNames()) {
      counts[table] = this.db.$client.prepare(`select count(*) from "${table}"`).pluck().get() as number;
    }
    return counts;
  }

  /**
   * Every object a row names: found by column name (`object_key`) rather than by a fixed list,
   * so a table added later (released datasets, for one) is backed up without touching this code.
   */
  referencedObjects(): ReferencedObject[] {
    const objects: ReferencedObject[] = [];
    for (const table of this.tableNames()) {
      const columns = new Set(
        (this.db.$client.prepare(`select name from pragma_table_info(?)`).pluck().all(table) as string[]),
      );
      if (!columns.has(OBJECT_KEY_COLUMN)) continue;
      const recordsSha = TABLES_RECORDING_OBJECT_SHA256.has(table) && columns.has('sha256');
      const rows = this.db.$client
        .prepare(
          `select ${OBJECT_KEY_COLUMN} as key,
                  ${recordsSha ? 'sha256' : 'null'} as recordedSha256,
                  ${columns.has('content_type') ? 'content_type' : 'null'} as contentType
             from "${table}" where ${OBJECT_KEY_COLUMN} is not null order by ${OBJECT_KEY_COLUMN}`,
        )
        .all() as { key: string; recordedSha256: string | null; contentType: string | null }[];
      for (const row of rows) objects.push({ ...row, referencedBy: `${table}.${OBJECT_KEY_COLUMN}` });
    }
    return objects;
  }

  /** SQLite's own consistency check: `ok`, or the first problems it lists. */
  integrityCheck(): string {
    const lines = this.db.$client.prepare('pragma integrity_check(5)').pluck().all() as string[];
    return lines.join('; ');
  }
}
