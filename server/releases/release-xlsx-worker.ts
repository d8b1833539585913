/**
 * The release workbook on a worker thread. exceljs spends a couple of microseconds on every cell,
 * which for a large release is the longest single task; on its own thread, with its own read-only
 * connection to the database, it runs beside the CSV and transport files instead of after them.
 * The snapshot is passed over, so both threads write the same sessions; the service checks the
 * data fingerprint after both are done.
 *
 * The worker is started from a small boot script that registers the TypeScript loader (tsx, a
 * dependency of the app), since the server runs from source. When it cannot start, the workbook
 * is written on the calling thread instead.
 */
import { isMainThread, parentPort, Worker, workerData } from 'node:worker_threads';
import type { Logger } from 'pino';
import { openDatabaseReadOnly } from '../db/database.js';
import { WORKBOOK_PASSES, writeWorkbookFile, type BuildContext } from './release-builder.js';
import { ReleaseRepository } from './release-repository.js';
import { releaseSource, type Snapshot } from './release-source.js';
import type { StoredDigest } from './release-store.js';

const WORKBOOK_TASK = 'tidemark-release-workbook';

/** What the worker needs to write the workbook. */
interface WorkbookTask {
  readonly task: typeof WORKBOOK_TASK;
  readonly databaseFile: string;
  readonly studyCode: string;
  readonly snapshot: Snapshot;
  readonly context: BuildContext;
  readonly filePath: string;
}

type WorkerMessage = { type: 'progress'; done: number } | { type: 'done'; digest: StoredDigest } | { type: 'failed'; message: string };

/** A workbook being written: its digest when done, and a way to stop it. */
export interface WorkbookJob {
  readonly done: Promise<StoredDigest>;
  stop(): void;
}

/**
 * Writes the workbook on a worker thread, reporting sessions done (of sessionCount × 4 passes);
 * falls back to this thread when the worker cannot be started.
 */
export function startWorkbook(
  task: Omit<WorkbookTask, 'task'>,
  progress: (done: number, total: number) => void,
  inThisThread: (sessionDone: () => void) => Promise<StoredDigest>,
  logger: Logger,
): WorkbookJob {
  const total = task.snapshot.sessions.length * WORKBOOK_PASSES;
  let worker: Worker | undefined;
  let started = false;
  let fallbackDone = 0;
  const fallback = () =>
    inThisThread(() => {
      if (++fallbackDone % 100 === 0 || fallbackDone === total) progress(fallbackDone, total);
    });
  const done = new Promise<StoredDigest>((resolve, reject) => {
    try {
      const entry = new URL(import.meta.url).href;
      const boot = `import('tsx/esm/api').then(({ register }) => { register(); return import(${JSON.stringify(entry)}); })`;
      worker = new Worker(boot, {
        eval: true,
        workerData: { ...task, task: WORKBOOK_TASK } satisfies WorkbookTask,
        // Small heap limits make the worker collect its garbage early instead of growing: its live
        // data is the snapshot (about 2 KB a session) and one batch of sessions at a time.
        resourceLimits: { maxYoungGenerationSizeMb: 8, maxOldGenerationSizeMb: 64 + Math.ceil(task.snapshot.sessions.length / 250) },
      });
    } catch (error) {
      logger.warn({ err: error }, 'the workbook worker could not start; writing the workbook on this thread');
      fallback().then(resolve, reject);
      return;
    }
    worker.on('message', (message: WorkerMessage) => {
      started = true;
      if (message.type === 'progress') progress(message.done, total);
      else if (message.type === 'done') resolve(message.digest);
      else reject(new Error(message.message));
    });
    worker.on('error', (error) => {
      if (started) {
        reject(error);
        return;
      }
      logger.warn({ err: error }, 'the workbook worker failed to start; writing the workbook on this thread');
      fallback().then(resolve, reject);
    });
    worker.on('exit', (code) => {
      if (code !== 0) reject(new Error(`The workbook worker stopped (exit code ${code}).`));
    });
  });
  return {
    done,
    stop: () => {
      void worker?.terminate();
    },
  };
}

async function runWorkbookTask(task: WorkbookTask): Promise<void> {
  const db = openDatabaseReadOnly(task.databaseFile);
  try {
    let done = 0;
    const source = releaseSource(new ReleaseRepository(db), task.studyCode, task.snapshot);
    const digest = await writeWorkbookFile(source, task.context, task.filePath, () => {
      if (++done % 100 === 0) parentPort!.postMessage({ type: 'progress', done } satisfies WorkerMessage);
    });
    parentPort!.postMessage({ type: 'done', digest } satisfies WorkerMessage);
  } catch (error) {
    parentPort!.postMessage({ type: 'failed', message: error instanceof Error ? error.message : String(error) } satisfies WorkerMessage);
  } finally {
    db.$client.close();
  }
}

if (!isMainThread && (workerData as Partial<WorkbookTask> | null)?.task === WORKBOOK_TASK) {
  void runWorkbookTask(workerData as WorkbookTask);
}
