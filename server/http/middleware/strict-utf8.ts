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

/**
 * JSON may escape a lone surrogate (`"\ud800"`, RFC 8259 §8.2 allows it), but such a string is not Unicode text:
 * MariaDB refuses it in JSON columns and turns it into U+FFFD in text columns. Returns the path of the first string
 * or key that is not well-formed, or null. Iterative, so a deeply nested body cannot overflow the stack.
 */
// A high surrogate not followed by a low one, or a low one not preceded by a high one (UTF-16 code units).
const loneSurrogate = /[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/;

export function firstIllFormedString(value: unknown): string | null {
  const stack: [unknown, string][] = [[value, '$']];
  while (stack.length > 0) {
    const [v, path] = stack.pop()!;
    if (typeof v === 'string') {
      if (loneSurrogate.test(v)) return path.slice(0, 200);
    } else if (Array.isArray(v)) {
      for (let i = v.length - 1; i >= 0; i--) if (typeof v[i] === 'string' || (v[i] !== null && typeof v[i] === 'object')) stack.push([v[i], `${path}[${i}]`]);
    } else if (v !== null && typeof v === 'object') {
      for (const key of Object.keys(v)) {
        if (loneSurrogate.test(key)) return `${path.slice(0, 200)} (a key)`;
        stack.push([(v as Record<string, unknown>)[key], `${path}.${key}`]);
      }
    }
  }
  return null;
}
