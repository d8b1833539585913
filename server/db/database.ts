import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import Sqlite from 'better-sqlite3';
import { drizzle, type BetterSQLite3Database } from 'drizzle-orm/better-sqlite3';
import { migrate } from 'drizzle-orm/better-sqlite3/migrator';
import * as schema from './schema.js';

export type TidemarkDatabase = BetterSQLite3Database<typeof schema> & { $client: Sqlite.Database };

const migrationsFolder = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../drizzle');

/** Opens the SQLite file (WAL, foreign keys on) and applies pending migrations. */
export function openDatabase(file: string): TidemarkDatabase {
  if (file !== ':memory:') fs.mkdirSync(path.dirname(file), { recursive: true });
  const client = new Sqlite(file);
  client.pragma('journal_mode = WAL');
  client.pragma('foreign_keys = ON');
  client.pragma('busy_timeout = 5000');
  const db = drizzle({ client, schema });
  migrate(db, { migrationsFolder });
  return db;
}

/** Whether the database answers a trivial query. */
export function pingDatabase(db: TidemarkDatabase): void {
  db.$client.prepare('select 1').get();
}

/** Opens an existing database file read-only, without migrating: for checks beside a running app. */
export function openDatabaseReadOnly(file: string): TidemarkDatabase {
  const client = new Sqlite(file, { readonly: true, fileMustExist: true });
  return drizzle({ client, schema });
}
