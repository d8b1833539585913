import path from 'node:path';
import { parseArgs } from 'node:util';
import { connectToAppStorage } from '../backup/storage-connection.js';
import { assertBackupCanStart, takeBackup } from '../backup/take-backup.js';
import { callerWorkingDirectory, loadConfig } from '../config.js';

const USAGE = 'Usage: npm run --silent backup -- --out DIR [--json]\n';

// The AWS SDK version is pinned, so its notice about future Node requirements is noise here.
process.env['AWS_SDK_JS_NODE_VERSION_SUPPORT_WARNING_DISABLED'] ??= 'true';

/**
 * `npm run --silent backup -- --out DIR`: copies the database (SQLite online backup, safe
 * while the app runs) and every stored object its rows name into DIR, with a manifest of
 * SHA-256s. Storage is reached as the app reaches it (see connectToAppStorage).
 * Exit 0 when the backup is complete and the source was sound, 1 when something was wrong
 * (the backup is still written where it could be), 2 for a usage problem.
 */
async function main(): Promise<number> {
  let values;
  try {
    ({ values } = parseArgs({ options: { out: { type: 'string' }, json: { type: 'boolean' } }, strict: true }));
  } catch (error) {
    process.stderr.write(`${(error as Error).message}\n${USAGE}`);
    return 2;
  }
  if (!values.out) {
    process.stderr.write(`--out is required: the folder to write the backup to.\n${USAGE}`);
    return 2;
  }
  const outDir = path.resolve(callerWorkingDirectory(), values.out);
  const config = loadConfig();
  // Before storage: a storage fake started for nothing would create DATA_DIR/storage.
  assertBackupCanStart(config.databaseFile, outDir);
  const started = performance.now();
  const storage = await connectToAppStorage(config);
  try {
    const { manifest, problems } = await takeBackup({ databaseFile: config.databaseFile, storage, outDir });
    const elapsedMs = Math.round(performance.now() - started);
    const objectBytes = manifest.objects.reduce((sum, object) => sum + object.sizeBytes, 0);
    if (values.json) {
      process.stdout.write(
        `${JSON.stringify({ outDir, elapsedMs, objects: manifest.objects.length, objectBytes, database: manifest.database, problems })}\n`,
      );
    } else {
      const kib = (bytes: number) => `${(bytes / 1024).toFixed(1)} KiB`;
      process.stdout.write(
        [
          `Backup written to ${outDir} in ${(elapsedMs / 1000).toFixed(1)} s`,
          `  database  ${config.databaseFile} -> ${manifest.database.file} (${kib(manifest.database.sizeBytes)}, ` +
            `${manifest.database.auditRows} audit rows, sha256 ${manifest.database.sha256.slice(0, 16)}...)`,
          `  objects   ${manifest.objects.length} (${kib(objectBytes)}) from ${storage.description}`,
          `  manifest  manifest.json`,
          '',
        ].join('\n'),
      );
    }
    for (const problem of problems) process.stderr.write(`Problem in the source: ${problem}\n`);
    return problems.length === 0 ? 0 : 1;
  } finally {
    await storage.close();
  }
}

main().then(
  (code) => {
    process.exitCode = code;
  },
  (error: unknown) => {
    process.stderr.write(`Backup failed: ${(error as Error).message}\n`);
    process.exitCode = 1;
  },
);
