import type { AddressInfo } from 'node:net';
import { simpleParser } from 'mailparser';
import { SMTPServer } from 'smtp-server';
import type { Logger } from '../config';
import type { CapturedMessage } from '../db';

export interface FakeSmtpServer {
  /** The port actually bound (useful when started on port 0). */
  readonly port: number;
  stop(): Promise<void>;
}

export interface FakeSmtpOptions {
  host: string;
  port: number;
  /** Persists one captured message; it should store message and recipients atomically. */
  store(message: CapturedMessage): Promise<unknown>;
  logger?: Logger;
  /** Largest message accepted, in bytes. */
  maxSize?: number;
}

/**
 * A local SMTP server that accepts every message and keeps it in the outbox instead of delivering it,
 * so invitation and reset e-mails travel over real SMTP in development and tests.
 */
export async function startFakeSmtpServer(options: FakeSmtpOptions): Promise<FakeSmtpServer> {
  const maxSize = options.maxSize ?? 10 * 1024 * 1024;
  const server = new SMTPServer({
    name: 'cellwright-outbox.local',
    banner: 'Cellwright local outbox (messages are captured, never delivered)',
    authOptional: true,
    // Loopback only: no TLS to offer, and any credentials a client sends are accepted as-is.
    disabledCommands: ['STARTTLS'],
    allowInsecureAuth: true,
    onAuth(auth, _session, callback) {
      callback(null, { user: auth.username ?? 'anonymous' });
    },
    size: maxSize,
    // Shutdown should not wait the default 30 s for an idle client to hang up.
    closeTimeout: 2_000,
    logger: false,
    onData(stream, session, callback) {
      const chunks: Buffer[] = [];
      stream.on('data', (c: Buffer) => chunks.push(c));
      stream.on('error', (err) => callback(err));
      stream.on('end', () => {
        if ((stream as unknown as { sizeExceeded?: boolean }).sizeExceeded) {
          const err = Object.assign(new Error('Message exceeds the fixed maximum message size'), { responseCode: 552 });
          callback(err);
          return;
        }
        const raw = Buffer.concat(chunks);
        simpleParser(raw)
          .then(async (parsed) => {
            const envelopeFrom = session.envelope.mailFrom;
            await options.store({
              messageId: parsed.messageId ?? null,
              from: envelopeFrom ? envelopeFrom.address : '',
              to: session.envelope.rcptTo.map((r) => r.address),
              subject: parsed.subject ?? '',
              text: parsed.text ?? '',
              html: typeof parsed.html === 'string' ? parsed.html : null,
              raw,
            });
            callback();
          })
          .catch((err: unknown) => {
            options.logger?.error({ err }, 'fake SMTP server could not store a message');
            callback(Object.assign(new Error('Temporary failure storing the message'), { responseCode: 451 }));
          });
      });
    },
  });

  await new Promise<void>((resolve, reject) => {
    const onError = (err: Error) => reject(err);
    server.once('error', onError);
    server.listen(options.port, options.host, () => {
      server.off('error', onError);
      resolve();
    });
  });
  server.on('error', (err) => options.logger?.error({ err }, 'fake SMTP server error'));
  const port = (server.server.address() as AddressInfo).port;
  options.logger?.info({ host: options.host, port }, 'fake SMTP server capturing mail');

  return {
    port,
    stop: () => new Promise<void>((resolve) => server.close(() => resolve())),
  };
}
