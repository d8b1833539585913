import fs from 'node:fs';
import path from 'node:path';
import Sqlite from 'better-sqlite3';
import { AuditRepository } from '../audit/audit-repository.js';
import { verifyAuditChain } from '../audit/audit-chain.js';
import { openDatabaseReadOnly } from '../db/database.js';
import {
  BACKUP_FORMAT,
  DATABASE_FILE,
  MANIFEST_FILE,
  objectFilePath,
  sha256Of,
  sha256OfFile,
  type BackedUpObject,
  type BackupManifest,
} from './backup-manifest.js';
import { BackupRepository, RELEASE_KEY_PREFIX, type ReferencedObject } from './backup-repository.js';
import type { StorageConnection } from './storage-connection.js';

/** The version of the code that wrote the backup (package.json), without loading the whole app. */
const WRITER_VERSION = (JSON.parse(fs.readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string }).version;
/** How many objects are fetched at once. */
const PARALLEL_FETCHES = 8;
/** SQLite's backup copies this many pages per step: all of them, so the copy is one read transaction. */
const ALL_PAGES = 0x7fffffff;

/** What a backup wrote and anything that was wrong with the data it copied. */
export interface BackupOutcome {
  readonly manifest: BackupManifest;
  /** Problems found in the source (missing object, checksum mismatch, broken audit chain); the backup is written anyway. */
  readonly problems: readonly string[];
}

/** Runs `work` over `items`, at most `parallel` at a time. */
async function forEachInParallel<T>(items: readonly T[], parallel: number, work: (item: T) => Promise<void>): Promise<void> {
  let next = 0;
  const worker = async () => {
    while (next < items.length) await work(items[next++]);
  };
  await Promise.all(Array.from({ length: Math.min(parallel, items.length) }, worker));
}

/** Refuses a missing database or a backup folder that already holds something, before any work starts. */
export function assertBackupCanStart(databaseFile: string, outDir: string): void {
  if (!fs.existsSync(databaseFile)) throw new Error(`No database at ${databaseFile}: check TIDEMARK_DATA_DIR or TIDEMARK_DB_FILE.`);
  if (fs.existsSync(outDir) && fs.readdirSync(outDir).length > 0) {
    throw new Error(`${outDir} is not empty: give a new folder for the backup, so no earlier backup is overwritten.`);
  }
}

/**
 * Takes a backup beside the running app:
 * 1. the database through SQLite's online backup API from a read-only connection, in one step,
 *    so the copy is the database as of one moment, whatever the app writes meanwhile;
 * 2. every object the copy's rows name (and everything under `releases/`), fetched through the
 *    object storage API. Uploads store their object before their row commits, so every row in
 *    the copy has its object already; objects stored after the snapshot are simply not in it.
 * 3. `manifest.json` last, with the SHA-256 of every file: a folder without it is incomplete.
 */
export async function takeBackup(options: {
  databaseFile: string;
  storage: StorageConnection;
  outDir: string;
  now?: Date;
}): Promise<BackupOutcome> {
  const { databaseFile, storage, outDir } = options;
  assertBackupCanStart(databaseFile, outDir);
  fs.mkdirSync(outDir, { recursive: true });
  const databaseCopy = path.join(outDir, DATABASE_FILE);
  const createdAt = (options.now ?? new Date()).toISOString();

  const live = new Sqlite(databaseFile, { readonly: true, fileMustExist: true });
  try {
    live.pragma('busy_timeout = 5000');
    await live.backup(databaseCopy, { progress: () => ALL_PAGES });
  } finally {
    live.close();
  }
  // A self-contained file: the live database is in WAL mode, its copy needs no -wal or -shm beside it.
  const writable = new Sqlite(databaseCopy);
  writable.pragma('journal_mode = DELETE');
  writable.close();

  const problems: string[] = [];
  const db = openDatabaseReadOnly(databaseCopy);
  let referenced: ReferencedObject[];
  let rowCounts: Record<string, number>;
  let chain: ReturnType<typeof verifyAuditChain>;
  try {
    const repository = new BackupRepository(db);
    const integrity = repository.integrityCheck();
    if (integrity !== 'ok') problems.push(`SQLite integrity check of the database copy: ${integrity}`);
    chain = verifyAuditChain(new AuditRepository(db).chain());
    if (!chain.ok) problems.push(`audit trail broken at row ${chain.firstBreak!.sequence}: ${chain.firstBreak!.problem}`);
    referenced = repository.referencedObjects();
    rowCounts = repository.rowCounts();
  } finally {
    db.$client.close();
  }

  const wanted = new Map(referenced.map((object) => [object.key, object]));
  for await (const key of storage.storage.keys(RELEASE_KEY_PREFIX)) {
    if (!wanted.has(key)) wanted.set(key, { key, referencedBy: `storage prefix ${RELEASE_KEY_PREFIX}`, recordedSha256: null, contentType: null });
  }

  const objects: BackedUpObject[] = [];
  await forEachInParallel([...wanted.values()], PARALLEL_FETCHES, async (object) => {
    const metadata = await storage.storage.metadata(object.key);
    if (metadata === undefined) {
      problems.push(`object ${object.key} (named by ${object.referencedBy}) is missing from storage`);
      return;
    }
    const bytes = await storage.storage.get(object.key);
    const sha256 = sha256Of(bytes);
    if (object.recordedSha256 !== null && sha256 !== object.recordedSha256) {
      problems.push(`object ${object.key} (named by ${object.referencedBy}) does not match its recorded SHA-256 ${object.recordedSha256}; stored bytes hash to ${sha256}`);
    }
    const file = objectFilePath(outDir, object.key);
    fs.mkdirSync(path.dirname(file), { recursive: true });
    fs.writeFileSync(file, bytes);
    objects.push({
      key: object.key,
      referencedBy: object.referencedBy,
      sha256,
      sizeBytes: bytes.length,
      contentType: object.contentType || 'application/octet-stream',
      metadata,
    });
  });
  objects.sort((a, b) => a.key.localeCompare(b.key));

  const manifest: BackupManifest = {
    format: BACKUP_FORMAT,
    createdAt,
    appVersion: WRITER_VERSION,
    source: { database: databaseFile, storage: storage.description },
    database: {
      file: DATABASE_FILE,
      sha256: await sha256OfFile(databaseCopy),
      sizeBytes: fs.statSync(databaseCopy).size,
      auditRows: chain.rowsChecked,
      lastAuditHash: chain.lastHash,
      rowCounts,
    },
    objects,
  };
  fs.writeFileSync(path.join(outDir, MANIFEST_FILE), `${JSON.stringify(manifest, null, 2)}\n`);
  return { manifest, problems };
}
