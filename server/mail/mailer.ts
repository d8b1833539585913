import nodemailer, { type Transporter, type TransportOptions } from 'nodemailer';

/** Outgoing e-mail through any SMTP server (the local catcher or a real relay). */
export class Mailer {
  private readonly transport: Transporter;

  constructor(
    smtpUrl: string,
    private readonly from: string,
  ) {
    const url = new URL(smtpUrl);
    const isLoopback = ['127.0.0.1', 'localhost', '[::1]'].includes(url.hostname);
    // The loopback catcher speaks plain SMTP; a real relay (smtps:// or STARTTLS) is expected to offer TLS.
    this.transport = nodemailer.createTransport({
      url: smtpUrl,
      ...(isLoopback ? { ignoreTLS: true, secure: false } : {}),
    } as TransportOptions);
  }

  async ping(): Promise<void> {
    await this.transport.verify();
  }

  async send(message: { to: string; subject: string; text: string; html?: string }): Promise<void> {
    await this.transport.sendMail({ from: this.from, ...message });
  }

  close(): void {
    this.transport.close();
  }
}
