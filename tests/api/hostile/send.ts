// Requests exactly as a hostile client writes them, on node:http rather than fetch: fetch refuses a body on
// GET, always declares a length, and would re-encode or reject the odd bytes these tests need to send.
import http from 'node:http';
import { responseChecker } from '../../helpers/described-api';

export interface RawRequest {
  method: string;
  path: string;
  headers?: Record<string, string>;
  body?: Buffer;
  /** Send the body in chunks without a Content-Length (Transfer-Encoding: chunked), as a streaming client does. */
  chunked?: boolean;
}

export interface RawAnswer {
  status: number;
  contentType: string;
  text: string;
  json: unknown;
}

const chunkBytes = 64 * 1024;

/**
 * Sends one request and reads the answer. The server may answer before it has read the whole body (a 413 on
 * the declared length, a 401 before parsing); the answer counts, and the write error that follows is ignored.
 * An event stream is read up to its headers and dropped, since a stream on a queued run never ends by itself.
 */
export async function send(base: string, request: RawRequest): Promise<RawAnswer> {
  const answer = await sendRaw(base, request);
  if (process.env.CHECK_API_DESCRIPTION === '1') (await describedBy(base)).checkAnswer({ ...request, ...answer });
  return answer;
}

type Checker = ReturnType<typeof responseChecker>;
const checkers = new Map<string, Promise<Checker>>();

/**
 * With CHECK_API_DESCRIPTION=1 every answer these tests see is held to the API's own description
 * (tests/helpers/described-api.ts): its status documented for the route, its JSON valid under the schema.
 */
function describedBy(base: string): Promise<Checker> {
  let checker = checkers.get(base);
  if (!checker) {
    checker = (async () => {
      const doc = await sendRaw(base, { method: 'GET', path: '/api/openapi.json' });
      const schema = await sendRaw(base, { method: 'GET', path: '/api/schemas/codebook.schema.json' });
      const codebook = JSON.parse(schema.text) as { $id: string };
      return responseChecker(doc.json as Parameters<typeof responseChecker>[0], { [codebook.$id]: codebook });
    })();
    checkers.set(base, checker);
  }
  return checker;
}

function sendRaw(base: string, request: RawRequest): Promise<RawAnswer> {
  const url = new URL(request.path, base);
  const headers: Record<string, string> = { ...(request.headers ?? {}) };
  if (request.body && !request.chunked) headers['Content-Length'] = String(request.body.length);
  // Named outright: Node frames a body in chunks by default only for methods that usually carry one, and would
  // otherwise send a GET's bytes unframed, as if they were the next request.
  if (request.body && request.chunked) headers['Transfer-Encoding'] = 'chunked';
  return new Promise((resolve, reject) => {
    let answered = false;
    const req = http.request(url, { method: request.method, headers }, (res) => {
      answered = true;
      const contentType = String(res.headers['content-type'] ?? '');
      if (contentType.startsWith('text/event-stream')) {
        res.destroy();
        req.destroy();
        resolve({ status: res.statusCode ?? 0, contentType, text: '', json: null });
        return;
      }
      const parts: Buffer[] = [];
      let ended = false;
      res.on('data', (b: Buffer) => parts.push(b));
      res.on('error', reject);
      // A connection cut in the middle of the answer ends the wait too (a promise settles once).
      res.on('close', () => {
        if (!ended) reject(new Error(`answer to ${request.method} ${request.path} cut off after ${res.statusCode}`));
      });
      res.on('end', () => {
        ended = true;
        const text = Buffer.concat(parts).toString('utf8');
        let json: unknown = null;
        if (contentType.includes('json')) {
          try {
            json = JSON.parse(text);
          } catch {
            json = undefined;
          }
        }
        resolve({ status: res.statusCode ?? 0, contentType, text, json });
      });
    });
    req.on('error', (err) => {
      if (!answered) reject(new Error(`no answer to ${request.method} ${request.path}: ${err.message}`));
    });
    const body = request.body;
    if (!body) {
      req.end();
    } else if (!request.chunked) {
      req.end(body);
    } else {
      // Chunks written one after another, each after the last drained, so the server sees a stream.
      let offset = 0;
      const writeMore = () => {
        while (offset < body.length && !req.destroyed) {
          const piece = body.subarray(offset, offset + chunkBytes);
          offset += piece.length;
          if (!req.write(piece)) {
            req.once('drain', writeMore);
            return;
          }
        }
        if (!req.destroyed) req.end();
      };
      writeMore();
    }
  });
}
