import fs from 'node:fs';
import path from 'node:path';
import { openDatabaseReadOnly } from '../db/database.js';
import {
  DATABASE_FILE,
  objectFilePath,
  readManifest,
  sha256Of,
  sha256OfFile,
  type BackupManifest,
} from './backup-manifest.js';
import type { StorageConnection } from './storage-connection.js';
import { verifyRestoredData, type VerificationCheck } from './verify-restored-data.js';

/** What a restore wrote and what its verification found. */
export interface RestoreReport {
  readonly manifest: BackupManifest;
  readonly databaseFile: string;
  readonly objectsRestored: number;
  /** Faults in the backup folder itself (a file changed or missing since the backup was taken). */
  readonly backupCheck: VerificationCheck;
  /** The restored database and storage checked against each other. */
  readonly checks: readonly VerificationCheck[];
  readonly ok: boolean;
}

/** Refuses a data folder that already holds something, so a restore never mixes with live data. */
export function assertFreshDataDir(dataDir: string): void {
  if (fs.existsSync(dataDir) && fs.readdirSync(dataDir).length > 0) {
    throw new Error(`${dataDir} is not empty: restore into a new folder, so no existing data is overwritten.`);
  }
}

/** Refuses a bucket that already holds objects: the restored data must be all there is. */
async function assertEmptyStorage(storage: StorageConnection): Promise<void> {
  for await (const key of storage.storage.keys('')) {
    throw new Error(`${storage.description} already holds objects (${key}, ...): restore needs an empty bucket.`);
  }
}

/**
 * Restores a backup folder into a fresh data folder (checked by the caller with
 * `assertFreshDataDir` before a storage fake creates `storage/` in it): the database file into `dataDir`, the
 * objects into `storage` (with the content type and metadata they had), then verifies. The
 * backup's files are checked against the manifest as they are read, but written anyway, so
 * that the verification of the restored data names every object that is wrong.
 */
export async function restoreBackup(options: { fromDir: string; dataDir: string; storage: StorageConnection }): Promise<RestoreReport> {
  const { fromDir, dataDir, storage } = options;
  const manifest = readManifest(fromDir);
  await assertEmptyStorage(storage);

  const backupProblems: string[] = [];
  const sourceDatabase = path.join(fromDir, DATABASE_FILE);
  if (!fs.existsSync(sourceDatabase)) throw new Error(`${sourceDatabase} is missing: the backup has no database.`);
  const databaseSha = await sha256OfFile(sourceDatabase);
  if (databaseSha !== manifest.database.sha256) {
    backupProblems.push(`${DATABASE_FILE} does not match the SHA-256 in the manifest (expected ${manifest.database.sha256}, found ${databaseSha})`);
  }
  fs.mkdirSync(dataDir, { recursive: true });
  const databaseFile = path.join(dataDir, DATABASE_FILE);
  fs.copyFileSync(sourceDatabase, databaseFile, fs.constants.COPYFILE_EXCL);

  let objectsRestored = 0;
  for (const object of manifest.objects) {
    const file = objectFilePath(fromDir, object.key);
    if (!fs.existsSync(file)) {
      backupProblems.push(`object ${object.key}: its copy ${path.relative(fromDir, file)} is missing from the backup`);
      continue;
    }
    const bytes = fs.readFileSync(file);
    const sha256 = sha256Of(bytes);
    if (sha256 !== object.sha256) {
      backupProblems.push(`object ${object.key}: the backup's copy does not match the SHA-256 in the manifest (expected ${object.sha256}, found ${sha256})`);
    }
    await storage.storage.put(object.key, bytes, object.contentType, object.metadata);
    objectsRestored++;
  }

  const backupCheck: VerificationCheck = {
    name: 'backup files match manifest',
    ok: backupProblems.length === 0,
    detail: backupProblems.length === 0 ? `database and ${manifest.objects.length} objects as recorded` : backupProblems.join('; '),
    problems: backupProblems,
  };
  const db = openDatabaseReadOnly(databaseFile);
  let checks: VerificationCheck[];
  try {
    checks = await verifyRestoredData(db, storage.storage, manifest);
  } finally {
    db.$client.close();
  }
  return {
    manifest,
    databaseFile,
    objectsRestored,
    backupCheck,
    checks,
    ok: backupCheck.ok && checks.every((entry) => entry.ok),
  };
}
