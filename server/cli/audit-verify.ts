import { existsSync } from 'node:fs';
import path from 'node:path';
import { parseArgs } from 'node:util';
import { AuditRepository } from '../audit/audit-repository.js';
import { verifyAuditChain } from '../audit/audit-chain.js';
import { callerWorkingDirectory, loadConfig } from '../config.js';
import { openDatabaseReadOnly } from '../db/database.js';

/**
 * `npm run --silent audit:verify [-- --database FILE] [--json]`: walks the audit chain and
 * names the first broken row. Opens the database read-only, so it is safe beside a running app.
 * Exit 0 when the chain holds, 1 when it is broken, 2 for a usage problem.
 */
function main(): number {
  let values;
  try {
    ({ values } = parseArgs({ options: { database: { type: 'string' }, json: { type: 'boolean' } }, strict: true }));
  } catch (error) {
    process.stderr.write(`${(error as Error).message}\nUsage: npm run --silent audit:verify -- [--database FILE] [--json]\n`);
    return 2;
  }
  const file = values.database ? path.resolve(callerWorkingDirectory(), values.database) : loadConfig().databaseFile;
  if (!existsSync(file)) {
    process.stderr.write(`No database at ${file}.\n`);
    return 2;
  }
  const db = openDatabaseReadOnly(file);
  try {
    const started = performance.now();
    const result = verifyAuditChain(new AuditRepository(db).chain());
    const elapsedMs = Math.round(performance.now() - started);
    if (values.json) {
      process.stdout.write(`${JSON.stringify({ database: file, ...result, elapsedMs })}\n`);
    } else if (result.ok) {
      process.stdout.write(`Audit trail intact: ${result.rowsChecked} rows verified in ${elapsedMs} ms (last hash ${result.lastHash}).\n`);
    } else {
      process.stdout.write(
        `Audit trail BROKEN at row ${result.firstBreak!.sequence}: ${result.firstBreak!.problem}. ` +
          `${result.rowsChecked} rows before it verified.\n`,
      );
    }
    return result.ok ? 0 : 1;
  } finally {
    db.$client.close();
  }
}

process.exitCode = main();
