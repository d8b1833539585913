import { createHash } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { z } from 'zod';

/** Version tag of the backup layout; a restore refuses any other. */
export const BACKUP_FORMAT = 'tidemark-backup/1';
/** File names inside a backup folder. */
export const MANIFEST_FILE = 'manifest.json';
export const DATABASE_FILE = 'tidemark.sqlite';
export const OBJECTS_FOLDER = 'objects';

/** A key that maps onto a file path inside the backup folder: relative, no `.` or `..` segment, no backslash or control character. */
const objectKeySchema = z
  .string()
  .min(1)
  .max(1024)
  .refine(
    (key) =>
      key
        .split('/')
        .every((segment) => segment !== '' && segment !== '.' && segment !== '..' && ![...segment].some((c) => c === '\\' || c < ' ')),
    'not a key that can be kept as a file (empty, "." or ".." segment, backslash or control character)',
  );

const sha256Schema = z.string().regex(/^[0-9a-f]{64}$/);

const backedUpObjectSchema = z.object({
  key: objectKeySchema,
  /** Table and column that name the object, or the storage prefix it was found under. */
  referencedBy: z.string(),
  sha256: sha256Schema,
  sizeBytes: z.number().int().nonnegative(),
  contentType: z.string(),
  /** The object's user metadata in storage (the upload sweep reads it), restored as it was. */
  metadata: z.record(z.string(), z.string()),
});

/** What `backup` writes beside the database copy and the objects, and what `restore` checks them against. */
export const backupManifestSchema = z.object({
  format: z.literal(BACKUP_FORMAT),
  createdAt: z.string(),
  appVersion: z.string(),
  /** Where the objects came from (endpoint and bucket), for the operator reading the backup later. */
  source: z.object({ database: z.string(), storage: z.string() }),
  database: z.object({
    file: z.literal(DATABASE_FILE),
    sha256: sha256Schema,
    sizeBytes: z.number().int().nonnegative(),
    auditRows: z.number().int().nonnegative(),
    lastAuditHash: z.string(),
    /** Row count of every table at the moment of the snapshot. */
    rowCounts: z.record(z.string(), z.number().int().nonnegative()),
  }),
  objects: z.array(backedUpObjectSchema),
});

export type BackupManifest = z.infer<typeof backupManifestSchema>;
export type BackedUpObject = z.infer<typeof backedUpObjectSchema>;

/** Hex SHA-256 of some bytes. */
export function sha256Of(bytes: Uint8Array): string {
  return createHash('sha256').update(bytes).digest('hex');
}

/** Hex SHA-256 of a file, read in chunks so a large database does not sit in memory. */
export async function sha256OfFile(file: string): Promise<string> {
  const hash = createHash('sha256');
  for await (const chunk of fs.createReadStream(file)) hash.update(chunk as Buffer);
  return hash.digest('hex');
}

/** Where an object's bytes live inside a backup folder; refuses a key that would leave the folder. */
export function objectFilePath(backupDir: string, key: string): string {
  const parsed = objectKeySchema.safeParse(key);
  if (!parsed.success) throw new Error(`Storage key "${key}" is ${parsed.error.issues[0].message}; it cannot be written to a backup folder.`);
  const objectsDir = path.resolve(backupDir, OBJECTS_FOLDER);
  const file = path.resolve(objectsDir, ...key.split('/'));
  if (!file.startsWith(objectsDir + path.sep)) throw new Error(`Storage key "${key}" points outside the backup folder.`);
  return file;
}

/** Reads and checks a backup folder's manifest; the message names what is wrong. */
export function readManifest(backupDir: string): BackupManifest {
  const file = path.join(backupDir, MANIFEST_FILE);
  if (!fs.existsSync(file)) throw new Error(`${file} does not exist: ${backupDir} is not a Tidemark backup folder.`);
  let json: unknown;
  try {
    json = JSON.parse(fs.readFileSync(file, 'utf8'));
  } catch (error) {
    throw new Error(`${file} is not valid JSON (${(error as Error).message}).`);
  }
  const parsed = backupManifestSchema.safeParse(json);
  if (!parsed.success) {
    const problems = parsed.error.issues.map((issue) => `${issue.path.join('.') || '(top)'}: ${issue.message}`);
    throw new Error(`${file} is not a ${BACKUP_FORMAT} manifest: ${problems.slice(0, 5).join('; ')}`);
  }
  return parsed.data;
}
