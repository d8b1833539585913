import { AuditRepository } from '../audit/audit-repository.js';
import { verifyAuditChain } from '../audit/audit-chain.js';
import type { TidemarkDatabase } from '../db/database.js';
import type { ObjectStorage } from '../storage/object-storage.js';
import { sha256Of, type BackupManifest } from './backup-manifest.js';
import { BackupRepository, RELEASE_KEY_PREFIX } from './backup-repository.js';

/** One line of the verification report. */
export interface VerificationCheck {
  readonly name: string;
  readonly ok: boolean;
  /** What was found, in numbers when it holds, naming each fault when it does not. */
  readonly detail: string;
  readonly problems: readonly string[];
}

/** Most faults a check lists by name before it summarises the rest. */
const LISTED_PROBLEMS = 20;

function check(name: string, problems: string[], detailWhenOk: string): VerificationCheck {
  const listed = problems.slice(0, LISTED_PROBLEMS);
  const more = problems.length > LISTED_PROBLEMS ? `; and ${problems.length - LISTED_PROBLEMS} more` : '';
  return { name, ok: problems.length === 0, detail: problems.length === 0 ? detailWhenOk : `${listed.join('; ')}${more}`, problems };
}

/**
 * Checks a database and its object storage against each other and against the backup's
 * manifest: SQLite integrity, the audit hash chain (and that it ends where the backup's did),
 * row counts as of the backup, every object a row names present with the SHA-256 its row
 * recorded (uploads.sha256, reference_sets.sha256; the manifest's for other tables), and no
 * stored object that nothing names.
 */
export async function verifyRestoredData(db: TidemarkDatabase, storage: ObjectStorage, manifest: BackupManifest): Promise<VerificationCheck[]> {
  const repository = new BackupRepository(db);
  const checks: VerificationCheck[] = [];

  const integrity = repository.integrityCheck();
  checks.push(check('database integrity', integrity === 'ok' ? [] : [`SQLite integrity check: ${integrity}`], 'SQLite integrity check ok'));

  const chain = verifyAuditChain(new AuditRepository(db).chain());
  const chainProblems: string[] = [];
  if (!chain.ok) chainProblems.push(`audit trail broken at row ${chain.firstBreak!.sequence}: ${chain.firstBreak!.problem}`);
  else if (chain.rowsChecked !== manifest.database.auditRows || chain.lastHash !== manifest.database.lastAuditHash) {
    chainProblems.push(
      `audit trail holds ${chain.rowsChecked} rows ending in ${chain.lastHash.slice(0, 12)}, ` +
        `the backup recorded ${manifest.database.auditRows} ending in ${manifest.database.lastAuditHash.slice(0, 12)}`,
    );
  }
  checks.push(check('audit chain', chainProblems, `${chain.rowsChecked} rows verified, last hash ${chain.lastHash.slice(0, 12)}`));

  const counts = repository.rowCounts();
  const countProblems = Object.entries(manifest.database.rowCounts)
    .filter(([table, expected]) => counts[table] !== expected)
    .map(([table, expected]) => `table ${table} holds ${counts[table] ?? 'no'} rows, the backup recorded ${expected}`);
  checks.push(check('row counts', countProblems, `${Object.keys(counts).length} tables as recorded in the manifest`));

  const referenced = repository.referencedObjects();
  const backedUp = new Map(manifest.objects.map((object) => [object.key, object]));
  const objectProblems: string[] = [];
  let objectBytes = 0;
  for (const object of referenced) {
    const metadata = await storage.metadata(object.key);
    if (metadata === undefined) {
      objectProblems.push(`object ${object.key} (named by ${object.referencedBy}) is missing from storage`);
      continue;
    }
    const bytes = await storage.get(object.key);
    objectBytes += bytes.length;
    const sha256 = sha256Of(bytes);
    const expected = object.recordedSha256 ?? backedUp.get(object.key)?.sha256;
    const source = object.recordedSha256 ? object.referencedBy.replace('object_key', 'sha256') : 'the backup manifest';
    if (expected === undefined) {
      objectProblems.push(`object ${object.key} (named by ${object.referencedBy}) has no SHA-256 in ${source}`);
    } else if (sha256 !== expected) {
      objectProblems.push(`object ${object.key} does not match the SHA-256 recorded in ${source} (expected ${expected}, found ${sha256})`);
    }
  }
  checks.push(
    check('referenced objects', objectProblems, `${referenced.length} objects present with their recorded SHA-256 (${objectBytes} bytes)`),
  );

  const named = new Set(referenced.map((object) => object.key));
  const orphans: string[] = [];
  let stored = 0;
  for await (const key of storage.keys('')) {
    stored++;
    // A released dataset kept only in storage counts as named when the backup carried it.
    if (named.has(key) || (key.startsWith(RELEASE_KEY_PREFIX) && backedUp.has(key))) continue;
    orphans.push(`object ${key} is stored but no row names it`);
  }
  checks.push(check('no orphan objects', orphans, `${stored} stored objects, each named by a row`));
  return checks;
}
