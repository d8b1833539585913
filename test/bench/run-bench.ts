/**
 * `npm run bench`: every benchmark of Tidemark in one markdown table (figure, value, goal,
 * baseline, ratio to baseline), printed and written to test-output/bench-report.md. Each figure's
 * baseline is measured in the same run. `npm run bench -- engine load` runs only the named
 * sections. Figures vary by machine (run it alone): they are measured here, never asserted in tests.
 *
 * The engine section lives here: efforts analysed per second on one core, the cost of analysing
 * a session relative to merely parsing its JSON text, and heap after 1k versus 10k efforts. Each
 * time is the median of several equal batches, interleaved with its baseline after a warm-up.
 */
import os from 'node:os';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { loadProtocol } from '../../server/protocols/protocol-catalogue.js';
import { analyzeRecording } from '../../shared/spirometry/effort-analysis.js';
import type { Recording } from '../../shared/spirometry/model.js';
import { analyzeSession } from '../../shared/spirometry/session-analysis.js';
import {
  SESSION_DOCUMENT_FORMAT,
  parseSessionDocument,
  recordingToSessionEffort,
  sessionDocumentToRecordings,
  type SessionDocument,
} from '../../shared/spirometry/session-document.js';
import { generateEffort, generateSession, type EffortSpec } from '../../shared/spirometry/synthetic/curve-generator.js';
import { loadBenchmarkRows } from '../load/load-test.js';
import { auditChainBenchmarkRows } from './audit-chain-bench.js';
import { formatNumber as number, fromFourColumns, markdownTable, writeReport, type BenchRow } from './bench-report.js';
import { curvesBenchmarkRows } from './curves-bench.js';
import { ingestBenchmarkRows } from './ingest-bench.js';
import { queueBenchmarkRows } from './queue-bench.js';
import { releaseBenchmarkRows } from './release-bench.js';

setFlagsFromString('--expose-gc');
const collectGarbage = runInNewContext('gc') as () => void;

const protocol = loadProtocol();
const GOAL_EFFORTS_PER_S = 5000;
/** Goal for a session: the analysis beyond parsing (validation, conversion, engine) costs no more than the parse itself. */
const GOAL_ADDED_COST_RATIO = 1.0;
/** Repetitions of each measurement; the median is reported. */
const REPETITIONS = 9;
/** Target length of one timed batch (ms). */
const BATCH_MS = 150;
const WARM_UP_MS = 500;

/** A 15 s blow after a short still lead-in, as a spirometer would record it. */
function effortSpec(sampleRateHz: number): EffortSpec {
  return { sampleRateHz, blowDurationS: 15, leadInS: 0.5, tidalBreaths: 0, signal: 'volume' };
}

let sink: unknown;

/** Milliseconds per call of `fn` over `calls` calls. */
function timeBatch(fn: () => unknown, calls: number): number {
  const start = performance.now();
  for (let i = 0; i < calls; i++) sink = fn();
  return (performance.now() - start) / calls;
}

function median(values: readonly number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const middle = Math.floor(sorted.length / 2);
  return sorted.length % 2 === 1 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
}

/** Calls per batch so that one batch of the slowest function lasts about {@link BATCH_MS}, after warming all up. */
function batchSize(fns: readonly (() => unknown)[]): number {
  let slowestMs = 0;
  for (const fn of fns) {
    let calls = 0;
    const start = performance.now();
    while (performance.now() - start < WARM_UP_MS) {
      sink = fn();
      calls++;
    }
    slowestMs = Math.max(slowestMs, (performance.now() - start) / calls);
  }
  return Math.max(1, Math.round(BATCH_MS / slowestMs));
}

/**
 * Times several functions against each other: after a warm-up, {@link REPETITIONS} rounds
 * of one equal-sized batch each, in an order that rotates every round (so that drift and
 * garbage collection fall on all alike). Returns the median ms per call of each, and the
 * median of the per-round ratios of each to the first.
 */
function compare(fns: readonly (() => unknown)[]): { ms: number[]; ratioToFirst: number[] } {
  const calls = batchSize(fns);
  const perRound: number[][] = fns.map(() => []);
  for (let round = 0; round < REPETITIONS; round++) {
    for (let k = 0; k < fns.length; k++) {
      const index = (k + round) % fns.length;
      perRound[index].push(timeBatch(fns[index], calls));
    }
  }
  if (sink === undefined) throw new Error('benchmark body returned nothing');
  return {
    ms: perRound.map(median),
    ratioToFirst: perRound.map((times) => median(times.map((time, round) => time / perRound[0][round]))),
  };
}

function heapAfter(recordings: readonly Recording[], efforts: number): number {
  let kept = 0;
  for (let i = 0; i < efforts; i++) {
    const analysis = analyzeSession([recordings[i % recordings.length]], protocol);
    kept += analysis.efforts.length;
  }
  if (kept !== efforts) throw new Error('lost efforts');
  collectGarbage();
  collectGarbage();
  return process.memoryUsage().heapUsed;
}

/** The engine's rows: throughput against JSON.parse of the same samples, the parts of a session, and heap. */
function engineBenchmarkRows(): BenchRow[] {
  const rows: BenchRow[] = [];
  for (const rateHz of [100, 1000]) {
    const { recording } = generateEffort(effortSpec(rateHz), 42);
    const text = JSON.stringify(Array.from(recording.values));
    // The goal figure against its baseline alone, then the parts against the whole.
    const timed = compare([() => JSON.parse(text) as unknown, () => analyzeSession([recording], protocol)]);
    const [parseMs, sessionMs] = timed.ms;
    const parts = compare([
      () => analyzeSession([recording], protocol),
      () => analyzeRecording(recording, protocol.engine),
      () => analyzeRecording(recording, protocol.engine, { plot: true }),
    ]);
    const [, recordingMs, plottedMs] = parts.ms;
    rows.push({
      figure: `efforts analysed per second, 15 s effort at ${rateHz} Hz (one core)`,
      value: `${number(1000 / sessionMs)}/s`,
      goal: rateHz === 100 ? `>= ${number(GOAL_EFFORTS_PER_S)}/s` : '-',
      baseline: `JSON.parse of its samples, ${number(1000 / parseMs)}/s`,
      ratio: `${number(timed.ratioToFirst[1], 2)} (time per effort)`,
    });
    rows.push({
      figure: `  of which per-effort analysis (analyzeRecording), ${rateHz} Hz`,
      value: `${number(recordingMs * 1000, 1)} us/effort`,
      goal: '-',
      baseline: 'the whole analyzeSession above',
      ratio: `${number(parts.ratioToFirst[1], 2)}`,
    });
    rows.push({
      figure: `  with plot series for the reader's screen, ${rateHz} Hz`,
      value: `${number(plottedMs * 1000, 1)} us/effort`,
      goal: '-',
      baseline: 'analyzeRecording without plot series',
      ratio: `${number(parts.ratioToFirst[2] / parts.ratioToFirst[1], 2)}`,
    });
  }

  for (const rateHz of [100, 1000]) {
    const efforts = generateSession({ efforts: 8, base: effortSpec(rateHz) }, 7);
    const document: SessionDocument = {
      format: SESSION_DOCUMENT_FORMAT,
      metadata: { subjectCode: 'BENCH-001', visit: 'V1', demographics: { ageYears: 45, heightCm: 172, sex: 'female' } },
      efforts: efforts.map(({ recording }) => recordingToSessionEffort(recording)),
    };
    const text = JSON.stringify(document);
    const parsed = JSON.parse(text) as unknown;
    const validated = parseSessionDocument(parsed);
    const recordings = sessionDocumentToRecordings(validated);
    const options = { demographics: { ageYears: 45 } };
    // The same text for both: JSON.parse alone, and the whole path from text to analysis.
    const timed = compare([
      () => JSON.parse(text) as unknown,
      () => analyzeSession(sessionDocumentToRecordings(parseSessionDocument(JSON.parse(text))), protocol, options),
      () => parseSessionDocument(parsed),
      () => sessionDocumentToRecordings(validated),
      () => analyzeSession(recordings, protocol, options),
    ]);
    const [parseMs, totalMs, validateMs, convertMs, engineMs] = timed.ms;
    const totalRatio = timed.ratioToFirst[1];
    rows.push({
      figure: `session of 8 efforts at ${rateHz} Hz (${number(text.length / 1024)} KiB JSON): parse + validate + analyse`,
      value: `${number(totalMs, 2)} ms`,
      goal: `added cost <= ${number(GOAL_ADDED_COST_RATIO, 1)}`,
      baseline: `JSON.parse of the same text, ${number(parseMs, 2)} ms`,
      ratio: `${number(totalRatio, 2)} in all, added cost ${number(totalRatio - 1, 2)}`,
    });
    rows.push({
      figure: '  of which: schema validation / to recordings / analyzeSession',
      value: `${number(validateMs, 2)} / ${number(convertMs, 2)} / ${number(engineMs, 2)} ms`,
      goal: '-',
      baseline: 'JSON.parse of the same text',
      ratio: `${number(timed.ratioToFirst[2], 2)} / ${number(timed.ratioToFirst[3], 2)} / ${number(timed.ratioToFirst[4], 2)}`,
    });
  }

  const recordings = [1, 2, 3, 4].map((seed) => generateEffort(effortSpec(100), seed).recording);
  collectGarbage();
  const startHeap = process.memoryUsage().heapUsed;
  const heap1k = heapAfter(recordings, 1000);
  const heap10k = heapAfter(recordings, 10000);
  const mib = (bytes: number): string => `${number(bytes / 1024 / 1024, 1)} MiB`;
  rows.push({
    figure: 'heap after 1k efforts (100 Hz, after GC)',
    value: mib(heap1k),
    goal: 'flat',
    baseline: `heap before, ${mib(startHeap)}`,
    ratio: number(heap1k / startHeap, 2),
  });
  rows.push({
    figure: 'heap after 10k more efforts (100 Hz, after GC)',
    value: mib(heap10k),
    goal: 'flat',
    baseline: `heap after 1k, ${mib(heap1k)}`,
    ratio: number(heap10k / heap1k, 2),
  });
  return rows;
}

/** Every section of the report, in the order of the table. */
const SECTIONS: readonly { readonly name: string; readonly rows: () => Promise<BenchRow[]> }[] = [
  { name: 'engine', rows: async () => engineBenchmarkRows() },
  { name: 'ingest', rows: () => ingestBenchmarkRows(number) },
  { name: 'queue', rows: async () => (await queueBenchmarkRows(number)).map(fromFourColumns) },
  { name: 'curves', rows: async () => (await curvesBenchmarkRows(number)).map(fromFourColumns) },
  { name: 'release', rows: async () => (await releaseBenchmarkRows(number)).map(fromFourColumns) },
  { name: 'audit', rows: () => auditChainBenchmarkRows(number) },
  { name: 'load', rows: () => loadBenchmarkRows(number) },
];

const wanted = process.argv.slice(2);
const unknown = wanted.filter((name) => !SECTIONS.some((section) => section.name === name));
if (unknown.length > 0) {
  process.stderr.write(`Unknown benchmark section(s): ${unknown.join(', ')}. Sections: ${SECTIONS.map((section) => section.name).join(', ')}.\n`);
  process.exit(2);
}
const loadAverageBefore = os.loadavg()[0];
const rows: BenchRow[] = [];
const failed: string[] = [];
for (const section of SECTIONS.filter((candidate) => wanted.length === 0 || wanted.includes(candidate.name))) {
  const started = performance.now();
  process.stderr.write(`bench: ${section.name}...\n`);
  try {
    rows.push(...(await section.rows()));
  } catch (error) {
    // One broken section must not cost the figures of the others: it is reported in its row.
    failed.push(section.name);
    rows.push({ figure: `${section.name}: not measured`, value: `failed: ${(error as Error).message.split('\n')[0]}`, goal: '-', baseline: '-', ratio: '-' });
  }
  process.stderr.write(`bench: ${section.name} took ${number((performance.now() - started) / 1000, 1)} s\n`);
}

const cpus = os.cpus();
const heading =
  `Tidemark benchmarks, ${new Date().toISOString().slice(0, 10)} (node ${process.version}, ${cpus.length} x ${cpus[0]?.model.trim() ?? 'unknown CPU'}, ` +
  `${number(os.totalmem() / 1024 ** 3, 1)} GiB, load average ${number(loadAverageBefore, 1)} before the run; protocol ${protocol.id} v${protocol.version})` +
  (wanted.length > 0 ? `; sections: ${wanted.join(', ')}` : '');
const report = `${heading}\n\n${markdownTable(rows)}\n`;
process.stdout.write(`${report}\nWritten to ${writeReport(report)}\n`);
if (failed.length > 0) {
  process.stderr.write(`Not measured: ${failed.join(', ')}.\n`);
  process.exitCode = 1;
}
