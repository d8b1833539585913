/**
 * Audit-chain benchmark: the time and peak resident memory of verifying a 1,000,000-row audit
 * chain (`verifyAuditChain(repository.chain())`, what `POST .../audit/verify` and
 * `npm run audit:verify` run), on a temporary SQLite file of this machine.
 *
 * The chain is written first, in a process of its own: the first row through AuditTrail.write,
 * the rest continuing it in one transaction with the AuditTrail's own hashing (auditRowHash), a
 * prepared insert per row instead of a query for the previous row each time. Verification then
 * runs in a fresh process, so that its peak RSS is its own and not the writer's or the other
 * benchmarks'. The process's RSS before the walk is reported beside the peak as the baseline.
 */
import { fork } from 'node:child_process';
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { auditRowHash, verifyAuditChain, type ChainedAuditFields } from '../../server/audit/audit-chain.js';
import { AuditRepository } from '../../server/audit/audit-repository.js';
import { AuditTrail } from '../../server/audit/audit-trail.js';
import { openDatabase } from '../../server/db/database.js';
import type { BenchRow, NumberFormat } from './bench-report.js';

const CHAIN_ROWS = 1_000_000;
/** Which phase a child process runs, and on which database file. */
const PHASE_VARIABLE = 'TIDEMARK_AUDIT_BENCH_PHASE';
const FILE_VARIABLE = 'TIDEMARK_AUDIT_BENCH_FILE';

/** What a phase reports back to the parent. */
interface PhaseReport {
  readonly ms: number;
  /** CPU time (user + system) of the phase: steadier than wall time on a busy machine. */
  readonly cpuMs: number;
  readonly rows: number;
  readonly ok: boolean;
  readonly baselineRssBytes: number;
  readonly peakRssBytes: number;
  readonly fileBytes: number;
  /** Verify phase only: wall and CPU ms to read the same rows and hash each row's text with SHA-256. */
  readonly hashOnlyMs?: number;
  readonly hashOnlyCpuMs?: number;
}

/** Writes `rows` chained audit rows shaped like the trail's commonest row (a checked session file). */
function writeChain(file: string, rows: number): PhaseReport {
  const db = openDatabase(file);
  const repository = new AuditRepository(db);
  const baselineRssBytes = process.memoryUsage().rss;
  const started = performance.now();
  const startedCpu = process.cpuUsage();
  let at = Date.parse('2026-01-01T00:00:00.000Z');
  const clock = () => new Date(at);
  const change = (n: number) => ({
    studyId: 'study-bench',
    siteId: `site-${100 + (n % 40)}`,
    entity: 'session',
    entityId: `session-${n}`,
    action: 'check-file',
    oldValue: JSON.stringify({ status: 'awaiting-file', currentUploadId: null }),
    newValue: JSON.stringify({ status: 'checked', uploadId: `upload-${n}`, efforts: 3 + (n % 6), fev1Grade: 'A', fvcGrade: 'B', calibrationChecks: 0 }),
  });
  new AuditTrail(repository, clock).write({ userId: 'user-coordinator-101', role: 'site-coordinator' }, (record) =>
    record({ ...change(1), oldValue: { status: 'awaiting-file', currentUploadId: null }, newValue: JSON.parse(change(1).newValue) }),
  );
  const insert = db.$client.prepare(
    `insert into audit_events (sequence, at, user_id, role, study_id, site_id, entity, entity_id, action, old_value, new_value, reason, previous_hash, hash)
     values (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
  );
  repository.inTransaction(() => {
    let previous = repository.lastRow()!;
    for (let sequence = previous.sequence + 1; sequence <= rows; sequence++) {
      at += 1000;
      const fields: ChainedAuditFields = {
        sequence,
        at: new Date(at).toISOString(),
        userId: 'user-coordinator-101',
        role: 'site-coordinator',
        reason: null,
        previousHash: previous.hash,
        ...change(sequence),
      };
      const hash = auditRowHash(fields);
      insert.run(
        fields.sequence,
        fields.at,
        fields.userId,
        fields.role,
        fields.studyId,
        fields.siteId,
        fields.entity,
        fields.entityId,
        fields.action,
        fields.oldValue,
        fields.newValue,
        fields.reason,
        fields.previousHash,
        hash,
      );
      previous = { sequence, hash };
    }
  });
  const ms = performance.now() - started;
  const cpuMs = cpuMsSince(startedCpu);
  db.$client.pragma('wal_checkpoint(TRUNCATE)');
  db.$client.close();
  return {
    ms,
    cpuMs,
    rows,
    ok: true,
    baselineRssBytes,
    peakRssBytes: process.resourceUsage().maxRSS * 1024,
    fileBytes: fs.statSync(file).size,
  };
}

/** Verifies the whole chain as the app does. */
function verifyChain(file: string): PhaseReport {
  const db = openDatabase(file);
  const baselineRssBytes = process.memoryUsage().rss;
  const started = performance.now();
  const startedCpu = process.cpuUsage();
  const result = verifyAuditChain(new AuditRepository(db).chain());
  const ms = performance.now() - started;
  const cpuMs = cpuMsSince(startedCpu);
  const peakRssBytes = process.resourceUsage().maxRSS * 1024;
  const hashStarted = performance.now();
  const hashStartedCpu = process.cpuUsage();
  let hashed = 0;
  for (const row of new AuditRepository(db).chain()) {
    createHash('sha256').update(JSON.stringify(row)).digest('hex');
    hashed++;
  }
  const hashOnlyMs = performance.now() - hashStarted;
  const hashOnlyCpuMs = cpuMsSince(hashStartedCpu);
  if (hashed !== result.rowsChecked) throw new Error(`The hash-only pass read ${hashed} rows, the verification ${result.rowsChecked}.`);
  db.$client.close();
  return {
    ms,
    cpuMs,
    hashOnlyMs,
    hashOnlyCpuMs,
    rows: result.rowsChecked,
    ok: result.ok,
    baselineRssBytes,
    peakRssBytes,
    fileBytes: fs.statSync(file).size,
  };
}

function cpuMsSince(start: NodeJS.CpuUsage): number {
  const used = process.cpuUsage(start);
  return (used.user + used.system) / 1000;
}

/** Runs one phase in a fresh Node process (with tsx, as `npm run bench` itself runs) and returns its report. */
function runPhase(phase: 'write' | 'verify', file: string): Promise<PhaseReport> {
  return new Promise((resolve, reject) => {
    const child = fork(fileURLToPath(import.meta.url), [], {
      execArgv: ['--import', 'tsx'],
      env: { ...process.env, [PHASE_VARIABLE]: phase, [FILE_VARIABLE]: file },
      stdio: ['ignore', 'inherit', 'inherit', 'ipc'],
    });
    let report: PhaseReport | undefined;
    child.on('message', (message) => (report = message as PhaseReport));
    child.on('error', reject);
    child.on('exit', (code) => (report && code === 0 ? resolve(report) : reject(new Error(`The audit-chain ${phase} phase ended with code ${code}`))));
  });
}

/** Rows for the benchmark table. */
export async function auditChainBenchmarkRows(format: NumberFormat): Promise<BenchRow[]> {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'tidemark-audit-bench-'));
  const file = path.join(dir, 'audit.sqlite');
  const mib = (bytes: number) => `${format(bytes / 1024 / 1024, 0)} MiB`;
  const rate = (ms: number) => `${format(CHAIN_ROWS / (ms / 1000))} rows/s`;
  try {
    const written = await runPhase('write', file);
    const verified = await runPhase('verify', file);
    if (!verified.ok || verified.rows !== CHAIN_ROWS) throw new Error(`The benchmark chain did not verify: ${verified.rows} rows, ok ${verified.ok}`);
    const hashOnlyMs = verified.hashOnlyMs!;
    const hashOnlyCpuMs = verified.hashOnlyCpuMs!;
    return [
      {
        figure: `audit chain verified, ${format(CHAIN_ROWS)} rows (SHA-256 chain walked from SQLite, ${mib(verified.fileBytes)} file)`,
        value: `${format(verified.ms / 1000, 1)} s (${rate(verified.ms)}; CPU ${format(verified.cpuMs / 1000, 1)} s)`,
        goal: '-',
        baseline:
          `SHA-256 of each row's text (JSON), same rows read from the same file: ${format(hashOnlyMs / 1000, 1)} s (${rate(hashOnlyMs)}; ` +
          `CPU ${format(hashOnlyCpuMs / 1000, 1)} s)`,
        // CPU time: steadier than wall time when other work shares the machine.
        ratio: `CPU time ${format(verified.cpuMs / hashOnlyCpuMs, 2)}`,
      },
      {
        figure: '  peak RSS of that verification',
        value: mib(verified.peakRssBytes),
        goal: '-',
        baseline: `the process before the walk, ${mib(verified.baselineRssBytes)}`,
        ratio: format(verified.peakRssBytes / verified.baselineRssBytes, 2),
      },
      {
        figure: '  writing that chain (one transaction, same hashing; set-up, not a product figure)',
        value: `${format(written.ms / 1000, 1)} s (${rate(written.ms)}; CPU ${format(written.cpuMs / 1000, 1)} s), peak RSS ${mib(written.peakRssBytes)}`,
        goal: '-',
        baseline: '-',
        ratio: '-',
      },
    ];
  } finally {
    fs.rmSync(dir, { recursive: true, force: true });
  }
}

const phase = process.env[PHASE_VARIABLE];
const phaseFile = process.env[FILE_VARIABLE];
if ((phase === 'write' || phase === 'verify') && phaseFile) {
  const report = phase === 'write' ? writeChain(phaseFile, CHAIN_ROWS) : verifyChain(phaseFile);
  // Run by hand (no parent to tell), a phase prints its report.
  if (process.send) process.send(report, () => process.exit(0));
  else process.stdout.write(`${JSON.stringify(report)}\n`);
}
