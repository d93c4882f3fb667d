import nodemailer, { type Transporter } from 'nodemailer';
import type { Config } from '../config';
import { AppError } from '../errors';
import type { MailContent } from '../mail/templates';

export interface MailService {
  send(to: string, content: MailContent): Promise<void>;
  close(): void;
}

export function createMailService(config: Pick<Config, 'smtp' | 'mailFrom'>): MailService {
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
      try {
        await transport.sendMail({ from: config.mailFrom, to, subject: content.subject, text: content.text, html: content.html });
      } catch (err) {
        throw new AppError('service_unavailable', 503, 'The e-mail could not be sent; try again shortly', {
          reason: (err as { code?: string }).code ?? 'smtp_error',
        });
      }
    },
    close() {
      transport.close();
    },
  };
}
