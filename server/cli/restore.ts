import path from 'node:path';
import { parseArgs } from 'node:util';
import { readManifest } from '../backup/backup-manifest.js';
import { assertFreshDataDir, restoreBackup } from '../backup/restore-backup.js';
import { connectToRestoreStorage } from '../backup/storage-connection.js';
import { callerWorkingDirectory, loadConfig } from '../config.js';

const USAGE = 'Usage: npm run --silent restore -- --from BACKUP_DIR --data-dir NEW_DATA_DIR\n';

// The AWS SDK version is pinned, so its notice about future Node requirements is noise here.
process.env['AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED'] ??= 'true';

/**
 * `npm run --silent restore -- --from DIR --data-dir NEWDIR`: restores a backup into a fresh
 * data folder (database file, objects into NEWDIR/storage through a storage fake started here,
 * or into the empty bucket of TIDEMARK_S3_ENDPOINT), then verifies it and prints a report.
 * Exit 0 when every check holds, 1 on any problem, 2 for a usage problem.
 */
async function main(): Promise<number> {
  let values;
  try {
    ({ values } = parseArgs({ options: { from: { type: 'string' }, 'data-dir': { type: 'string' } }, strict: true }));
  } catch (error) {
    process.stderr.write(`${(error as Error).message}\n${USAGE}`);
    return 2;
  }
  if (!values.from || !values['data-dir']) {
    process.stderr.write(`--from and --data-dir are both required.\n${USAGE}`);
    return 2;
  }
  const fromDir = path.resolve(callerWorkingDirectory(), values.from);
  const dataDir = path.resolve(callerWorkingDirectory(), values['data-dir']);
  // The restore writes only into dataDir and the storage below; TIDEMARK_DATA_DIR and TIDEMARK_DB_FILE are not used.
  const config = loadConfig();
  // Both checked before a storage fake creates NEWDIR/storage, so a refused restore leaves nothing behind.
  readManifest(fromDir);
  assertFreshDataDir(dataDir);
  const storage = await connectToRestoreStorage(config, dataDir);
  try {
    const report = await restoreBackup({ fromDir, dataDir, storage });
    const counts = report.manifest.database.rowCounts;
    const rows = [report.backupCheck, ...report.checks];
    const width = Math.max(...rows.map((row) => row.name.length));
    process.stdout.write(
      [
        `Restored ${fromDir} (taken ${report.manifest.createdAt}) into ${dataDir}`,
        `  database  ${report.databaseFile}: ${counts['test_sessions'] ?? 0} sessions, ${counts['uploads'] ?? 0} uploads, ` +
          `${report.manifest.database.auditRows} audit rows`,
        `  objects   ${report.objectsRestored} into ${storage.description}`,
        '',
        `  ${'check'.padEnd(width)}  result  detail`,
        ...rows.map((row) => `  ${row.name.padEnd(width)}  ${row.ok ? 'ok    ' : 'FAILED'}  ${row.detail}`),
        '',
        report.ok
          ? `Verification passed. Start the app with TIDEMARK_DATA_DIR=${dataDir}` +
            (config.storage.endpoint ? '.' : ' (its storage fake serves the restored objects from the storage folder).')
          : `Verification FAILED: ${rows.filter((row) => !row.ok).length} of ${rows.length} checks found problems (listed above).`,
        '',
      ].join('\n'),
    );
    return report.ok ? 0 : 1;
  } finally {
    await storage.close();
  }
}

main().then(
  (code) => {
    process.exitCode = code;
  },
  (error: unknown) => {
    process.stderr.write(`Restore failed: ${(error as Error).message}\n`);
    process.exitCode = 1;
  },
);
