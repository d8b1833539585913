import fs from 'node:fs';
import S3rver from 's3rver';

export interface StorageFake {
  readonly endpoint: string;
  close(): Promise<void>;
}

/**
 * An S3-compatible server on loopback (s3rver) keeping objects in `directory`.
 * Tidemark reaches it only through the AWS SDK, exactly as it would a hosted store.
 */
export async function startStorageFake(options: { port: number; directory: string; bucket: string }): Promise<StorageFake> {
  fs.mkdirSync(options.directory, { recursive: true });
  const server = new S3rver({
    address: '127.0.0.1',
    port: options.port,
    silent: true,
    directory: options.directory,
    configureBuckets: [{ name: options.bucket, configs: [] }],
  });
  const { port } = await server.run();
  return { endpoint: `http://127.0.0.1:${port}`, close: () => server.close() };
}
