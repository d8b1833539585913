import fs from 'node:fs';
import path from 'node:path';
import type { AddressInfo } from 'node:net';
import { SMTPServer } from 'smtp-server';

export interface MailCatcher {
  readonly smtpUrl: string;
  /** Raw messages caught so far, oldest first. */
  readonly messages: string[];
  close(): Promise<void>;
}

/**
 * A local SMTP server that accepts every message and keeps it: in memory, and as
 * `.eml` files in `folder` so a developer can open them with any mail reader.
 */
export async function startMailCatcher(options: { port: number; folder?: string }): Promise<MailCatcher> {
  const messages: string[] = [];
  if (options.folder) fs.mkdirSync(options.folder, { recursive: true });
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    logger: false,
    onData(stream, _session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (chunk: Buffer) => chunks.push(chunk));
      stream.on('end', () => {
        const raw = Buffer.concat(chunks).toString('utf8');
        messages.push(raw);
        if (options.folder) {
          const name = `${new Date().toISOString().replace(/[:.]/g, '-')}-${messages.length}.eml`;
          fs.writeFileSync(path.join(options.folder, name), raw);
        }
        callback();
      });
    },
  });
  await new Promise<void>((resolve) => server.listen(options.port, '127.0.0.1', resolve));
  const port = (server.server.address() as AddressInfo).port;
  return {
    smtpUrl: `smtp://127.0.0.1:${port}`,
    messages,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}
