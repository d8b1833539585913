/**
 * A temporary release file being written: every byte goes to disk and through SHA-256 as it
 * passes, so the file never sits whole in memory and its digest is ready when it is closed.
 */
import { createHash, type Hash } from 'node:crypto';
import fs from 'node:fs';
import { Writable } from 'node:stream';
import type { StoredDigest } from './release-store.js';

/** Writes one file while hashing it; `write` waits when the disk is behind. */
export class HashingFileSink {
  private readonly file: fs.WriteStream;
  private readonly hash: Hash = createHash('sha256');
  private size = 0;
  private failure: Error | undefined;
  private static readonly TEXT_BLOCK = 64 * 1024;
  /**
   * Text is encoded into this block as it comes, so that no long string waits in the heap (where it
   * would outlive a few young-generation collections and be promoted, to be collected much later).
   */
  private block = Buffer.allocUnsafe(HashingFileSink.TEXT_BLOCK);
  private blockUsed = 0;

  constructor(readonly path: string) {
    this.file = fs.createWriteStream(path);
    this.file.on('error', (error) => {
      this.failure = error;
    });
  }

  /** Appends text (UTF-8), gathered into blocks. */
  async writeText(text: string): Promise<void> {
    // At most three bytes per UTF-16 unit: only a text that might not fit is measured.
    if (this.blockUsed + text.length * 3 > this.block.length) {
      const bytes = Buffer.byteLength(text, 'utf8');
      if (this.blockUsed + bytes > this.block.length) {
        await this.flushText();
        if (bytes > this.block.length) {
          await this.writeBytes(Buffer.from(text, 'utf8'));
          return;
        }
      }
    }
    this.blockUsed += this.block.write(text, this.blockUsed, 'utf8');
  }

  /** Appends bytes; resolves once the disk has room for more. */
  async write(bytes: Buffer): Promise<void> {
    await this.flushText();
    await this.writeBytes(bytes);
  }

  /** Appends bytes and resolves once they are written to the file: the caller may then reuse them. */
  async writeThrough(bytes: Buffer): Promise<void> {
    await this.flushText();
    if (this.failure) throw this.failure;
    this.hash.update(bytes);
    this.size += bytes.length;
    await new Promise<void>((resolve, reject) => {
      this.file.write(bytes, (error) => (error ? reject(error) : resolve()));
    });
  }

  /** A Writable for writers that pipe (the workbook's zip stream). */
  asWritable(): Writable {
    return new Writable({
      write: (chunk: Buffer, _encoding, callback) => {
        this.writeBytes(chunk).then(() => callback(), callback);
      },
    });
  }

  /** Flushes, closes the file and returns its SHA-256 and size. */
  async close(): Promise<StoredDigest> {
    await this.flushText();
    await new Promise<void>((resolve, reject) => {
      this.file.end((error?: Error | null) => (error ? reject(error) : resolve()));
    });
    if (this.failure) throw this.failure;
    return { sha256: this.hash.digest('hex'), sizeBytes: this.size };
  }

  private async flushText(): Promise<void> {
    if (this.blockUsed === 0) return;
    const bytes = this.block.subarray(0, this.blockUsed);
    // The stream holds on to the bytes until they are on disk: the next text goes to a new block.
    this.block = Buffer.allocUnsafe(HashingFileSink.TEXT_BLOCK);
    this.blockUsed = 0;
    await this.writeBytes(bytes);
  }

  private async writeBytes(bytes: Buffer): Promise<void> {
    if (this.failure) throw this.failure;
    this.hash.update(bytes);
    this.size += bytes.length;
    if (!this.file.write(bytes)) {
      await new Promise<void>((resolve, reject) => {
        const onDrain = () => {
          this.file.off('error', onError);
          resolve();
        };
        const onError = (error: Error) => {
          this.file.off('drain', onDrain);
          reject(error);
        };
        this.file.once('drain', onDrain);
        this.file.once('error', onError);
      });
    }
  }
}
