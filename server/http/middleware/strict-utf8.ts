import type { IncomingMessage } from 'node:http';
import { badRequest } from '../../errors';

const decoder = new TextDecoder('utf-8', { fatal: true });

/**
 * `verify` hook for express.json: RFC 8259 §8.1 requires JSON exchanged between systems to be UTF-8, and
 * the parser would otherwise turn invalid bytes into U+FFFD and store a name nobody typed.
 */
export function rejectInvalidUtf8(_req: IncomingMessage, _res: unknown, body: Buffer): void {
  try {
    decoder.decode(body);
  } catch {
    throw badRequest('The request body is not valid UTF-8');
  }
}
