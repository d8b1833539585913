import { createHmac, randomBytes } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';

/** Name of the key file in the data folder. */
export const QUEUE_TOKEN_KEY_FILE = 'reading-token.key';

/**
 * Opaque queue tokens: HMAC-SHA256 of reader id and session id under a server secret, so a
 * token names a session only to the server, differs per reader (two readers cannot match their
 * queues item by item) and cannot be forged or replayed by another reader.
 *
 * The secret is 32 random bytes kept in `reading-token.key` in the data folder (config.dataDir),
 * created with owner-only permissions on first use; the schema has no place for server secrets.
 * Deleting the file only invalidates queue pages already shown (readers reload the queue).
 */
export class QueueTokens {
  private key: Buffer | undefined;

  constructor(private readonly dataDir: string) {}

  /** The token reader `readerId` sees for session `sessionId`. */
  tokenFor(readerId: string, sessionId: string): string {
    return createHmac('sha256', this.secret()).update(`queue:${readerId}:${sessionId}`).digest('base64url');
  }

  private secret(): Buffer {
    this.key ??= readOrCreateKey(path.join(this.dataDir, QUEUE_TOKEN_KEY_FILE));
    return this.key;
  }
}

function readOrCreateKey(file: string): Buffer {
  if (!fs.existsSync(file)) {
    fs.mkdirSync(path.dirname(file), { recursive: true });
    try {
      // 'wx' fails if another process created the file meanwhile; then its key is the one to use.
      fs.writeFileSync(file, randomBytes(32).toString('base64'), { flag: 'wx', mode: 0o600 });
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== 'EEXIST') throw error;
    }
  }
  const key = Buffer.from(fs.readFileSync(file, 'utf8').trim(), 'base64');
  if (key.length < 32) throw new Error(`${file} holds no usable key (expected 32 random bytes, base64); delete it to make a new one.`);
  return key;
}
