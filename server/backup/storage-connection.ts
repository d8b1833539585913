import net from 'node:net';
import path from 'node:path';
import { startStorageFake } from '../../storage-fake/s3-fake.js';
import type { AppConfig } from '../config.js';
import { ObjectStorage } from '../storage/object-storage.js';

/** Object storage reached by a command line tool, and how to let go of it. */
export interface StorageConnection {
  readonly storage: ObjectStorage;
  /** Where the objects are, in words for the report. */
  readonly description: string;
  close(): Promise<void>;
}

/** Whether something accepts TCP connections on a loopback port. */
function portAnswers(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = net.connect({ host: '127.0.0.1', port });
    socket.setTimeout(1000);
    socket.once('connect', () => {
      socket.destroy();
      resolve(true);
    });
    socket.once('timeout', () => {
      socket.destroy();
      resolve(false);
    });
    socket.once('error', () => resolve(false));
  });
}

async function connected(storage: ObjectStorage, description: string, close: () => Promise<void>): Promise<StorageConnection> {
  try {
    await storage.ping();
  } catch (error) {
    storage.destroy();
    await close();
    throw new Error(`Cannot reach ${description}: ${(error as Error).message || (error as Error).name}.`);
  }
  return {
    storage,
    description,
    close: async () => {
      storage.destroy();
      await close();
    },
  };
}

/**
 * Reaches the app's object storage the way the app does, for a tool that runs beside it:
 * - `TIDEMARK_S3_ENDPOINT` set: that service and bucket;
 * - otherwise, when something listens on `TIDEMARK_FAKE_S3_PORT`: the running app's storage fake
 *   (the same files must not be served twice);
 * - otherwise (the app is stopped, or the port is 0): a storage fake started here on a free port
 *   over `DATA_DIR/storage`, stopped again by `close()`.
 */
export async function connectToAppStorage(config: AppConfig): Promise<StorageConnection> {
  const settings = config.storage;
  const noClose = async () => undefined;
  if (settings.endpoint) {
    return connected(new ObjectStorage(settings), `bucket ${settings.bucket} at ${settings.endpoint}`, noClose);
  }
  if (settings.fakePort !== 0 && (await portAnswers(settings.fakePort))) {
    const endpoint = `http://127.0.0.1:${settings.fakePort}`;
    return connected(
      new ObjectStorage({ ...settings, endpoint }),
      `bucket ${settings.bucket} of the running storage fake at ${endpoint} (port ${settings.fakePort} is in use; ` +
        'if that is not the storage fake of this data folder, set TIDEMARK_S3_ENDPOINT)',
      noClose,
    );
  }
  return startOwnFake(config, path.join(config.dataDir, 'storage'));
}

/**
 * Object storage to restore into: `TIDEMARK_S3_ENDPOINT` when set, otherwise a storage fake
 * started here over `NEWDIR/storage` on a free port (a fresh folder no app serves yet).
 */
export async function connectToRestoreStorage(config: AppConfig, dataDir: string): Promise<StorageConnection> {
  if (config.storage.endpoint) {
    return connected(new ObjectStorage(config.storage), `bucket ${config.storage.bucket} at ${config.storage.endpoint}`, async () => undefined);
  }
  return startOwnFake(config, path.join(dataDir, 'storage'));
}

async function startOwnFake(config: AppConfig, directory: string): Promise<StorageConnection> {
  const fake = await startStorageFake({ port: 0, directory, bucket: config.storage.bucket });
  return connected(
    new ObjectStorage({ ...config.storage, endpoint: fake.endpoint }),
    `bucket ${config.storage.bucket} in ${directory} (storage fake started for this command)`,
    () => fake.close(),
  );
}
