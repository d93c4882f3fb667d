import pino, { type DestinationStream, type Logger } from 'pino';

export type { Logger };

// Credentials must never reach a log line, whichever object carries them.
const redactPaths = [
  'req.headers.authorization',
  'req.headers.cookie',
  'res.headers["set-cookie"]',
  'headers.authorization',
  'headers.cookie',
  'password',
  'passwordHash',
  'token',
  'body.password',
  'body.token',
  '*.password',
  '*.passwordHash',
  '*.password_hash',
  '*.token',
  '*.secret',
];

export function createLogger(level: string, destination?: DestinationStream): Logger {
  const options = { level, base: { service: 'cellwright' }, redact: { paths: redactPaths, censor: '[redacted]' } };
  return destination ? pino(options, destination) : pino(options);
}
