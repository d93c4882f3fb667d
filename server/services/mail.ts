import nodemailer, { type Transporter } from 'nodemailer';
import type { Config } from '../config';
import type { MailContent } from '../mail/templates';

/** One SMTP delivery; only the mail sender (services/mail-queue.ts) calls it, never a request or a transaction. */
export interface MailTransport {
  /** Resolves once the SMTP server accepted the message; rejects with nodemailer's error (responseCode when the server answered). */
  send(to: string, content: MailContent): Promise<void>;
  close(): void;
}

export function createMailTransport(config: Pick<Config, 'smtp' | 'mailFrom'>): MailTransport {
  const transport: Transporter = nodemailer.createTransport({
    host: config.smtp.host,
    port: config.smtp.port,
    secure: config.smtp.secure,
    auth: config.smtp.user ? { user: config.smtp.user, pass: config.smtp.password ?? '' } : undefined,
    // The local capture server offers no TLS; a real relay is reached with SMTP_SECURE or STARTTLS as it offers.
    ignoreTLS: config.smtp.fake,
    connectionTimeout: 10_000,
    greetingTimeout: 10_000,
    socketTimeout: 20_000,
  });
  return {
    async send(to, content) {
      await transport.sendMail({ from: config.mailFrom, to, subject: content.subject, text: content.text, html: content.html });
    },
    close() {
      transport.close();
    },
  };
}
