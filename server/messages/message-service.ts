import { randomUUID } from 'node:crypto';
import type { Logger } from 'pino';
import type { UserMessage } from '../../shared/contracts/sessions.js';
import type { Mailer } from '../mail/mailer.js';
import type { UserRepository } from '../users/user-repository.js';
import type { MessageRepository } from './message-repository.js';

/** What to tell a user; `link` is a path inside the app. */
export interface Notice {
  readonly subject: string;
  readonly body: string;
  readonly link?: string;
}

/** A message row written and not yet sent. */
export interface PendingMessage {
  readonly id: string;
  readonly to: string;
  readonly notice: Notice;
}

/**
 * Tells users things by e-mail and lists the same message in the app. Sending happens after
 * the request has its answer: a slow or absent mail relay never holds up or fails a write.
 */
export class MessageService {
  private readonly inFlight = new Set<Promise<void>>();

  constructor(
    private readonly repository: MessageRepository,
    private readonly users: UserRepository,
    private readonly mailer: Mailer,
    private readonly publicUrl: () => string,
    private readonly clock: () => Date,
    private readonly logger: Logger,
  ) {}

  notify(userId: string, notice: Notice): void {
    const pending = this.enqueue(userId, notice);
    if (pending) this.deliver(pending);
  }

  /**
   * Writes the message row only, so that a caller can do it inside its own transaction (one
   * commit instead of two); {@link deliver} sends it once that transaction has committed.
   */
  enqueue(userId: string, notice: Notice): PendingMessage | undefined {
    const user = this.users.findById(userId);
    if (!user) return undefined;
    const id = randomUUID();
    this.repository.insert({
      id,
      userId,
      toAddress: user.email,
      subject: notice.subject,
      body: notice.body,
      link: notice.link ?? null,
      createdAt: this.clock().toISOString(),
      delivery: 'pending',
      failure: null,
    });
    return { id, to: user.email, notice };
  }

  /** Sends a message written by {@link enqueue}, in the background; the outcome is recorded on its row. */
  deliver({ id, to, notice }: PendingMessage): void {
    const text = notice.link ? `${notice.body}\n\nOpen it in Tidemark: ${this.publicUrl()}${notice.link}\n` : `${notice.body}\n`;
    const sending = this.mailer
      .send({ to, subject: notice.subject, text })
      .then(() => this.repository.markDelivery(id, 'sent', null))
      .catch((error: unknown) => {
        this.logger.warn({ err: error, messageId: id }, 'e-mail not delivered');
        this.repository.markDelivery(id, 'failed', (error as Error).message ?? String(error));
      })
      .finally(() => this.inFlight.delete(sending));
    this.inFlight.add(sending);
  }

  /**
   * Sends the messages a stopped process committed but never sent (a crash after the commit and
   * before delivery). Run at start-up, before anything new is queued. Returns how many.
   */
  resendPending(): number {
    const rows = this.repository.pending();
    for (const row of rows) {
      this.deliver({ id: row.id, to: row.toAddress, notice: { subject: row.subject, body: row.body, link: row.link ?? undefined } });
    }
    return rows.length;
  }

  messagesOf(userId: string): UserMessage[] {
    return this.repository.latestFor(userId, 100).map((row) => ({
      id: row.id,
      subject: row.subject,
      body: row.body,
      link: row.link,
      createdAt: row.createdAt,
      delivery: row.delivery,
    }));
  }

  /** Waits for every e-mail still being sent (shutdown, tests). */
  async settle(): Promise<void> {
    while (this.inFlight.size > 0) await Promise.allSettled([...this.inFlight]);
  }
}
