import fs from 'node:fs';
import type { Readable } from 'node:stream';
import {
  DeleteObjectCommand,
  GetObjectCommand,
  HeadBucketCommand,
  HeadObjectCommand,
  ListObjectsV2Command,
  PutObjectCommand,
  S3Client,
} from '@aws-sdk/client-s3';
import type { AppConfig } from '../config.js';

/** Bytes read from a local file at a time while it is uploaded. */
const FILE_CHUNK_BYTES = 256 * 1024;

/** The S3-compatible object store, reached only through the AWS SDK (the local fake or a real service). */
export class ObjectStorage {
  private readonly client: S3Client;

  constructor(private readonly settings: AppConfig['storage'] & { endpoint: string | undefined }) {
    this.client = new S3Client({
      endpoint: settings.endpoint,
      region: settings.region,
      forcePathStyle: settings.forcePathStyle,
      credentials: { accessKeyId: settings.accessKeyId, secretAccessKey: settings.secretAccessKey },
      // Without these the SDK frames streamed bodies as aws-chunked, which some S3-compatible stores keep verbatim.
      requestChecksumCalculation: 'WHEN_REQUIRED',
      responseChecksumValidation: 'WHEN_REQUIRED',
    });
  }

  get bucket(): string {
    return this.settings.bucket;
  }

  async ping(): Promise<void> {
    await this.client.send(new HeadBucketCommand({ Bucket: this.settings.bucket }));
  }

  async put(key: string, body: Buffer, contentType: string, metadata: Record<string, string> = {}): Promise<void> {
    await this.client.send(
      new PutObjectCommand({ Bucket: this.settings.bucket, Key: key, Body: body, ContentType: contentType, Metadata: metadata }),
    );
  }

  /**
   * Uploads a local file as a stream, never whole in memory: one PutObject with its length given
   * up front (multipart uploads would need @aws-sdk/lib-storage, which the app does not carry).
   */
  async putFile(key: string, filePath: string, sizeBytes: number, contentType: string, metadata: Record<string, string> = {}): Promise<void> {
    await this.client.send(
      new PutObjectCommand({
        Bucket: this.settings.bucket,
        Key: key,
        // Large reads: far fewer chunks (and less CPU) than the default 64 KB for files of hundreds of megabytes.
        Body: fs.createReadStream(filePath, { highWaterMark: FILE_CHUNK_BYTES }),
        ContentLength: sizeBytes,
        ContentType: contentType,
        Metadata: metadata,
      }),
    );
  }

  async get(key: string): Promise<Buffer> {
    const result = await this.client.send(new GetObjectCommand({ Bucket: this.settings.bucket, Key: key }));
    if (!result.Body) throw new Error(`Object ${key} has no body`);
    return Buffer.from(await result.Body.transformToByteArray());
  }

  /** The stored bytes as a stream, or undefined when there is no such object. */
  async getStream(key: string): Promise<Readable | undefined> {
    try {
      const result = await this.client.send(new GetObjectCommand({ Bucket: this.settings.bucket, Key: key }));
      return result.Body as Readable | undefined;
    } catch (error) {
      if (isNotFound(error)) return undefined;
      throw error;
    }
  }

  /** The object's user metadata (lower-case keys), or undefined when there is no such object. */
  async metadata(key: string): Promise<Record<string, string> | undefined> {
    try {
      const result = await this.client.send(new HeadObjectCommand({ Bucket: this.settings.bucket, Key: key }));
      return result.Metadata ?? {};
    } catch (error) {
      if ((error as { name?: string }).name === 'NotFound') return undefined;
      throw error;
    }
  }

  /** Every key under a prefix, page by page. */
  async *keys(prefix: string): AsyncGenerator<string> {
    let continuationToken: string | undefined;
    do {
      const page = await this.client.send(
        new ListObjectsV2Command({ Bucket: this.settings.bucket, Prefix: prefix, ContinuationToken: continuationToken }),
      );
      for (const item of page.Contents ?? []) if (item.Key) yield item.Key;
      continuationToken = page.IsTruncated ? page.NextContinuationToken : undefined;
    } while (continuationToken);
  }

  async delete(key: string): Promise<void> {
    await this.client.send(new DeleteObjectCommand({ Bucket: this.settings.bucket, Key: key }));
  }

  destroy(): void {
    this.client.destroy();
  }
}

/** Whether the store answered that the object does not exist. */
export function isNotFound(error: unknown): boolean {
  const name = (error as { name?: string }).name;
  const status = (error as { $metadata?: { httpStatusCode?: number } }).$metadata?.httpStatusCode;
  return name === 'NoSuchKey' || name === 'NotFound' || status === 404;
}
