/**
 * Where release files live: the app's S3-compatible object store, under
 * `releases/<studyId>/<releaseId>/`. Release files can be hundreds of megabytes, so they go up
 * from their temporary file and come down as streams, never whole in memory.
 */
import { createHash } from 'node:crypto';
import type { Readable } from 'node:stream';
import { isNotFound, type ObjectStorage } from '../storage/object-storage.js';

/** SHA-256 and size of stored bytes. */
export interface StoredDigest {
  readonly sha256: string;
  readonly sizeBytes: number;
}

/** The object key of a release file. */
export function releaseKey(studyId: string, releaseId: string, fileName: string): string {
  return `releases/${studyId}/${releaseId}/${fileName}`;
}

/** Release files in the object store, streamed both ways. */
export class ReleaseStore {
  constructor(private readonly storage: ObjectStorage) {}

  /** Uploads a local file as a stream, with its SHA-256 in the object's metadata. */
  async putFile(key: string, filePath: string, digest: StoredDigest, contentType: string): Promise<void> {
    await this.storage.putFile(key, filePath, digest.sizeBytes, contentType, { sha256: digest.sha256 });
  }

  async putText(key: string, text: string, contentType: string): Promise<void> {
    await this.storage.put(key, Buffer.from(text, 'utf8'), contentType);
  }

  /** The stored text, or undefined when there is no such object. */
  async getText(key: string): Promise<string | undefined> {
    try {
      return (await this.storage.get(key)).toString('utf8');
    } catch (error) {
      if (isNotFound(error)) return undefined;
      throw error;
    }
  }

  /** A stream of the stored bytes, or undefined when there is no such object. */
  async open(key: string): Promise<Readable | undefined> {
    return this.storage.getStream(key);
  }

  /** SHA-256 and size recomputed from the stored bytes, or null when there is no such object. */
  async digest(key: string): Promise<StoredDigest | null> {
    const stream = await this.open(key);
    if (!stream) return null;
    const hash = createHash('sha256');
    let sizeBytes = 0;
    for await (const chunk of stream as AsyncIterable<Buffer>) {
      hash.update(chunk);
      sizeBytes += chunk.length;
    }
    return { sha256: hash.digest('hex'), sizeBytes };
  }

  /** Keys under a prefix. */
  keys(prefix: string): AsyncGenerator<string> {
    return this.storage.keys(prefix);
  }

  async delete(key: string): Promise<void> {
    await this.storage.delete(key);
  }
}
