import { isUtf8 } from 'node:buffer';
import type { IncomingMessage } from 'node:http';
import { badRequest } from '../../errors';

/**
 * `verify` hook for express.json: RFC 8259 §8.1 requires JSON exchanged between systems to be UTF-8, and
 * the parser would otherwise turn invalid bytes into U+FFFD and store a name nobody typed. isUtf8 validates
 * in place (the WHATWG Encoding rules, as a fatal TextDecoder would) without a second copy of a large body.
 */
export function rejectInvalidUtf8(_req: IncomingMessage, _res: unknown, body: Buffer): void {
  if (!isUtf8(body)) throw badRequest('The request body is not valid UTF-8');
}
