/**
 * Engine benchmark (`npm run bench`): efforts analysed per second on one core, the
 * cost of analysing a session relative to merely parsing its JSON text, and heap
 * after 1k versus 10k efforts. Prints a markdown table. Figures vary by machine:
 * they are measured here, never asserted in tests.
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
  sessionDocumentToRecordings,
  type SessionDocument,
} from '../../shared/spirometry/session-document.js';
import { generateEffort, generateSession, type EffortSpec } from '../../shared/spirometry/synthetic/curve-generator.js';

setFlagsFromString('--expose-gc');
const collectGarbage = runInNewContext('gc') as () => void;

const protocol = loadProtocol();
const GOAL_EFFORTS_PER_S = 5000;
const MIN_MEASURE_MS = 2000;

/** A 15 s blow after a short still lead-in, as a spirometer would record it. */
function effortSpec(sampleRateHz: number): EffortSpec {
  return { sampleRateHz, blowDurationS: 15, leadInS: 0.5, tidalBreaths: 0, signal: 'volume' };
}

/** Calls `fn` repeatedly for at least `minMs` (after a warm-up) and returns milliseconds per call. */
function msPerCall(fn: () => unknown, minMs = MIN_MEASURE_MS): number {
  let sink: unknown;
  const warmUntil = performance.now() + minMs / 4;
  while (performance.now() < warmUntil) sink = fn();
  let calls = 0;
  const start = performance.now();
  let elapsed = 0;
  while (elapsed < minMs) {
    for (let i = 0; i < 10; i++) sink = fn();
    calls += 10;
    elapsed = performance.now() - start;
  }
  if (sink === undefined) throw new Error('benchmark body returned nothing');
  return elapsed / calls;
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
  const sessionMs = msPerCall(() => analyzeSession([recording], protocol));
  const recordingMs = msPerCall(() => analyzeRecording(recording, protocol.engine));
  const perS = 1000 / sessionMs;
  const text = JSON.stringify(Array.from(recording.values));
  const parsePerS = 1000 / msPerCall(() => JSON.parse(text) as unknown);
  rows.push([
    `efforts analysed per second, 15 s effort at ${rateHz} Hz (one core)`,
    number(perS),
    rateHz === 100 ? `>= ${number(GOAL_EFFORTS_PER_S)}` : '-',
    `${number(perS / parsePerS, 3)} (baseline: JSON.parse of its samples, ${number(parsePerS)}/s)`,
  ]);
  rows.push([
    `  of which per-effort analysis (analyzeRecording), ${rateHz} Hz`,
    `${number(recordingMs * 1000, 1)} us/effort (${number((100 * recordingMs) / sessionMs, 0)} % of the time)`,
    '-',
    '-',
  ]);
}

for (const rateHz of [100, 1000]) {
  const efforts = generateSession({ efforts: 8, base: effortSpec(rateHz) }, 7);
  const document: SessionDocument = {
    format: SESSION_DOCUMENT_FORMAT,
    metadata: { subjectCode: 'BENCH-001', visit: 'V1', demographics: { ageYears: 45, heightCm: 172, sex: 'female' } },
    efforts: efforts.map(({ recording }) => ({
      label: recording.label,
      signal: recording.signal,
      sampleRateHz: recording.sampleRateHz,
      startTimeS: recording.startTimeS,
      values: Array.from(recording.values),
    })),
  };
  const text = JSON.stringify(document);
  const parseMs = msPerCall(() => JSON.parse(text) as unknown);
  const analyseMs = msPerCall(() =>
    analyzeSession(sessionDocumentToRecordings(parseSessionDocument(JSON.parse(text))), protocol, {
      demographics: { ageYears: 45 },
    }),
  );
  const parsed = JSON.parse(text) as unknown;
  const validateMs = msPerCall(() => parseSessionDocument(parsed), MIN_MEASURE_MS / 2);
  const validated = parseSessionDocument(parsed);
  const convertMs = msPerCall(() => sessionDocumentToRecordings(validated), MIN_MEASURE_MS / 2);
  const recordings = sessionDocumentToRecordings(validated);
  const engineMs = msPerCall(() => analyzeSession(recordings, protocol, { demographics: { ageYears: 45 } }), MIN_MEASURE_MS / 2);
  rows.push([
    `session of 8 efforts at ${rateHz} Hz (${number(text.length / 1024)} KiB JSON): parse + validate + analyse`,
    `${number(analyseMs, 2)} ms`,
    'ratio <= 1.0',
    `${number(analyseMs / parseMs, 2)} (baseline: JSON.parse of the file text, ${number(parseMs, 2)} ms)`,
  ]);
  rows.push([
    '  of which: schema validation / to recordings / analyzeSession',
    `${number(validateMs, 2)} / ${number(convertMs, 2)} / ${number(engineMs, 2)} ms`,
    '-',
    `${number(validateMs / parseMs, 2)} / ${number(convertMs / parseMs, 2)} / ${number(engineMs / parseMs, 2)}`,
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

const table = [
  '| figure | value | goal | ratio to baseline |',
  '| --- | --- | --- | --- |',
  ...rows.map((row) => `| ${row.join(' | ')} |`),
];
process.stdout.write(`Tidemark engine benchmark (node ${process.version}, protocol ${protocol.id} v${protocol.version})\n\n${table.join('\n')}\n`);
