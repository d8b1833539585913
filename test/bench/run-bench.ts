/**
 * Engine benchmark (`npm run bench`): efforts analysed per second on one core, the
 * cost of analysing a session relative to merely parsing its JSON text, and heap
 * after 1k versus 10k efforts. Prints a markdown table. Each time is the median of
 * several equal batches, interleaved with its baseline in the same run after a
 * warm-up. Figures vary by machine (run it alone): they are measured here, never
 * asserted in tests.
 */
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
import { ingestBenchmarkRows } from './ingest-bench.js';
import { auditChainBenchmarkRows } from './audit-chain-bench.js';
import { releaseBenchmarkRows } from './release-bench.js';
import { queueBenchmarkRows } from './queue-bench.js';
import { curvesBenchmarkRows } from './curves-bench.js';

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

const rows: string[][] = [];
const number = (value: number, digits = 0): string => value.toLocaleString('en-US', { maximumFractionDigits: digits, minimumFractionDigits: digits });

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
  rows.push([
    `efforts analysed per second, 15 s effort at ${rateHz} Hz (one core)`,
    number(1000 / sessionMs),
    rateHz === 100 ? `>= ${number(GOAL_EFFORTS_PER_S)}` : '-',
    `${number(timed.ratioToFirst[1], 2)} (baseline: JSON.parse of its samples, ${number(1000 / parseMs)}/s)`,
  ]);
  rows.push([
    `  of which per-effort analysis (analyzeRecording), ${rateHz} Hz`,
    `${number(recordingMs * 1000, 1)} us/effort (${number(100 * parts.ratioToFirst[1], 0)} % of the time)`,
    '-',
    '-',
  ]);
  rows.push([
    `  with plot series for the reader's screen, ${rateHz} Hz`,
    `${number(plottedMs * 1000, 1)} us/effort`,
    '-',
    `${number(parts.ratioToFirst[2] / parts.ratioToFirst[1], 2)} (baseline: without plot series)`,
  ]);
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
  rows.push([
    `session of 8 efforts at ${rateHz} Hz (${number(text.length / 1024)} KiB JSON): parse + validate + analyse`,
    `${number(totalMs, 2)} ms`,
    `added cost <= ${number(GOAL_ADDED_COST_RATIO, 1)}`,
    `${number(totalRatio, 2)} in all, added cost ${number(totalRatio - 1, 2)} (baseline: JSON.parse of the same text, ${number(parseMs, 2)} ms)`,
  ]);
  rows.push([
    '  of which: schema validation / to recordings / analyzeSession',
    `${number(validateMs, 2)} / ${number(convertMs, 2)} / ${number(engineMs, 2)} ms`,
    '-',
    `${number(timed.ratioToFirst[2], 2)} / ${number(timed.ratioToFirst[3], 2)} / ${number(timed.ratioToFirst[4], 2)}`,
  ]);
}

const recordings = [1, 2, 3, 4].map((seed) => generateEffort(effortSpec(100), seed).recording);
collectGarbage();
const startHeap = process.memoryUsage().heapUsed;
const heap1k = heapAfter(recordings, 1000);
const heap10k = heapAfter(recordings, 10000);
const mib = (bytes: number): string => `${number(bytes / 1024 / 1024, 1)} MiB`;
rows.push(['heap after 1k efforts (100 Hz, after GC)', mib(heap1k), 'flat', `${number(heap1k / startHeap, 2)} (baseline: heap before, ${mib(startHeap)})`]);
rows.push(['heap after 10k more efforts (100 Hz, after GC)', mib(heap10k), 'flat', `${number(heap10k / heap1k, 2)} (baseline: heap after 1k)`]);

rows.push(...(await ingestBenchmarkRows(number)));
rows.push(...(await auditChainBenchmarkRows(number)));
rows.push(...(await releaseBenchmarkRows(number)));
rows.push(...(await queueBenchmarkRows(number)));
rows.push(...(await curvesBenchmarkRows(number)));

const table = [
  '| figure | value | goal | ratio to baseline |',
  '| --- | --- | --- | --- |',
  ...rows.map((row) => `| ${row.join(' | ')} |`),
];
process.stdout.write(`Tidemark engine benchmark (node ${process.version}, protocol ${protocol.id} v${protocol.version})\n\n${table.join('\n')}\n`);
