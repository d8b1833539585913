/**
 * The release workbook on a worker thread. exceljs takes about a microsecond a cell, which makes
 * the workbook the longest single task of a large release; on its own thread it is written beside
 * the passes over the sessions, the SAS transport file and the uploads, from the CSV files as they
 * are written (./release-workbook.ts). The worker needs no database and no snapshot: it is told
 * where the files are and when each is complete.
 *
 * The worker is started from a small boot script that registers the TypeScript loader (tsx, a
 * dependency of the app), since the server runs from source. When it cannot start, the workbook
 * is written on the calling thread instead, the same way.
 */
import { isMainThread, parentPort, Worker, workerData } from 'node:worker_threads';
import type { Logger } from 'pino';
import type { BuildContext, TableFiles } from './release-builder.js';
import type { StoredDigest } from './release-store.js';
import { GrowingFiles, writeWorkbookFile } from './release-workbook.js';

const WORKBOOK_TASK = 'tidemark-release-workbook';

/** What the worker is started with. */
interface WorkbookTask {
  readonly task: typeof WORKBOOK_TASK;
  readonly files: TableFiles;
  readonly context: BuildContext;
  readonly filePath: string;
}

type ToWorker = { type: 'complete'; filePath: string; sizeBytes: number };
type FromWorker =
  | { type: 'ready' }
  | { type: 'rows'; rows: number }
  | { type: 'done'; digest: StoredDigest }
  | { type: 'failed'; message: string };

/** The workbook of a release being written, wherever it is written. */
export interface WorkbookJob {
  /** Tells the workbook that a file it is written from is complete. */
  fileComplete(filePath: string, sizeBytes: number): void;
  /** Resolves with the workbook's digest once written. */
  readonly done: Promise<StoredDigest>;
  /** Stops the worker (when the release fails, or after it is done). */
  stop(): void;
}

/**
 * Starts writing the workbook now, from the files as they are written: on a worker thread, or on
 * this one when `useWorker` is false or the worker cannot start. `rowsWritten` hears of rows as
 * they are written.
 */
export function startWorkbook(
  task: Omit<WorkbookTask, 'task'>,
  rowsWritten: (rows: number) => void,
  logger: Logger,
  useWorker = true,
): WorkbookJob {
  if (!useWorker) return inThisThread(task, rowsWritten, []);
  try {
    return onWorkerThread(task, rowsWritten, logger);
  } catch (error) {
    logger.warn({ err: error }, 'the workbook worker could not start; the workbook is written on this thread');
    return inThisThread(task, rowsWritten, []);
  }
}

function inThisThread(task: Omit<WorkbookTask, 'task'>, rowsWritten: (rows: number) => void, completed: readonly ToWorker[]): WorkbookJob {
  const growing = new GrowingFiles();
  for (const { filePath, sizeBytes } of completed) growing.complete(filePath, sizeBytes);
  return {
    fileComplete: (filePath, sizeBytes) => growing.complete(filePath, sizeBytes),
    done: writeWorkbookFile(task.files, growing, task.context, task.filePath, rowsWritten),
    stop: () => undefined,
  };
}

/** The workbook on a worker; until the worker is ready, what it is told is kept to be told again should it fail to start. */
function onWorkerThread(task: Omit<WorkbookTask, 'task'>, rowsWritten: (rows: number) => void, logger: Logger): WorkbookJob {
  const entry = new URL(import.meta.url).href;
  const boot = `import('tsx/esm/api').then(({ register }) => { register(); return import(${JSON.stringify(entry)}); })`;
  const worker = new Worker(boot, {
    eval: true,
    workerData: { ...task, task: WORKBOOK_TASK } satisfies WorkbookTask,
    // exceljs makes many short-lived objects per cell: a young generation of this size is
    // collected less often, at less cost in all, than a small one. The worker's live data is
    // small: one block of CSV records and exceljs's buffers.
    resourceLimits: { maxYoungGenerationSizeMb: 32, maxOldGenerationSizeMb: 128 },
  });
  const completed: ToWorker[] = [];
  let ready = false;
  let fallback: WorkbookJob | undefined;
  let settle!: { resolve: (digest: StoredDigest) => void; reject: (error: unknown) => void };
  const done = new Promise<StoredDigest>((resolve, reject) => (settle = { resolve, reject }));
  worker.on('message', (message: FromWorker) => {
    if (message.type === 'ready') ready = true;
    else if (message.type === 'rows') rowsWritten(message.rows);
    else if (message.type === 'done') settle.resolve(message.digest);
    else settle.reject(new Error(message.message));
  });
  worker.on('error', (error) => {
    if (ready) {
      settle.reject(error);
      return;
    }
    logger.warn({ err: error }, 'the workbook worker failed to start; the workbook is written on this thread');
    fallback = inThisThread(task, rowsWritten, completed);
    fallback.done.then(settle.resolve, settle.reject);
  });
  worker.on('exit', (code) => {
    if (!fallback) settle.reject(new Error(`The workbook worker stopped (exit code ${code}) before the workbook was written.`));
  });
  return {
    fileComplete: (filePath, sizeBytes) => {
      const message: ToWorker = { type: 'complete', filePath, sizeBytes };
      completed.push(message);
      if (fallback) fallback.fileComplete(filePath, sizeBytes);
      else worker.postMessage(message);
    },
    done,
    stop: () => {
      void worker.terminate();
    },
  };
}

/** In the worker: writes the workbook, told as the files are complete. */
function serveWorkbook(task: WorkbookTask): void {
  const port = parentPort!;
  const post = (message: FromWorker) => port.postMessage(message);
  const growing = new GrowingFiles();
  port.on('message', (message: ToWorker) => growing.complete(message.filePath, message.sizeBytes));
  writeWorkbookFile(task.files, growing, task.context, task.filePath, (rows) => post({ type: 'rows', rows })).then(
    (digest) => {
      post({ type: 'done', digest });
      port.close();
    },
    (error: unknown) => post({ type: 'failed', message: error instanceof Error ? error.message : String(error) }),
  );
  post({ type: 'ready' });
}

if (!isMainThread && (workerData as Partial<WorkbookTask> | null)?.task === WORKBOOK_TASK) {
  serveWorkbook(workerData as WorkbookTask);
}
