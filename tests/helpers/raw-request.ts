// A request whose body the test sends piece by piece, so it can tell whether the server answered before the
// body was through, hold an upload open while it looks at the server, or walk away in the middle.
import http from 'node:http';

export interface Answer {
  status: number;
  text: string;
  json: unknown;
}

export interface RawRequest {
  /** Resolves once the chunk is handed to the socket, or as soon as the server has answered (whichever first). */
  write(chunk: Buffer): Promise<void>;
  end(chunk?: Buffer): void;
  /** Drops the connection mid-body, as a client that goes away does. */
  abort(): void;
  /** True once the status line of the answer has arrived. */
  readonly answered: boolean;
  /** Bytes of body handed to the socket so far. */
  readonly sent: number;
  /** The whole answer; rejects on a connection error before any answer (or when the test aborts first). */
  readonly response: Promise<Answer>;
}

export function openRequest(base: string, method: string, path: string, headers: Record<string, string | number>): RawRequest {
  const url = new URL(path, base);
  // No keep-alive agent: each request has its own connection, which abort() can cut.
  const req = http.request({ host: url.hostname, port: url.port, path: url.pathname + url.search, method, headers, agent: false });
  let answered = false;
  let sent = 0;
  let onAnswer: () => void = () => undefined;
  const answeredSignal = new Promise<void>((resolve) => (onAnswer = resolve));
  const response = new Promise<Answer>((resolve, reject) => {
    req.on('response', (res) => {
      answered = true;
      onAnswer();
      let text = '';
      res.setEncoding('utf8');
      res.on('data', (c: string) => (text += c));
      res.on('end', () => {
        let json: unknown = null;
        try {
          json = JSON.parse(text);
        } catch {
          json = undefined;
        }
        resolve({ status: res.statusCode ?? 0, text, json });
      });
    });
    req.on('error', (err: NodeJS.ErrnoException) => {
      // Once the answer is in, a write that fails only means the server stopped listening to the rest.
      if (!answered) reject(err);
    });
  });
  response.catch(() => undefined);
  return {
    write(chunk) {
      if (answered || req.destroyed) return Promise.resolve();
      sent += chunk.length;
      const flushed = new Promise<void>((resolve) => req.write(chunk, () => resolve()));
      return Promise.race([flushed, answeredSignal]);
    },
    end(chunk) {
      if (chunk) sent += chunk.length;
      req.end(chunk);
    },
    abort() {
      req.destroy();
    },
    get answered() {
      return answered;
    },
    get sent() {
      return sent;
    },
    response,
  };
}

/**
 * Sends `total` bytes of `head` followed by repeats of `filler`, stopping as soon as the server answers.
 * Returns the answer and how much of the body had been handed over by then.
 */
export async function sendUntilAnswered(
  base: string,
  method: string,
  path: string,
  headers: Record<string, string>,
  body: { head: Buffer; filler: Buffer; total: number },
): Promise<Answer & { sentWhenAnswered: number }> {
  const r = openRequest(base, method, path, { ...headers, 'Content-Length': body.total });
  await r.write(body.head);
  while (!r.answered && r.sent < body.total) await r.write(body.filler.subarray(0, Math.min(body.filler.length, body.total - r.sent)));
  const sentWhenAnswered = r.sent;
  if (!r.answered) r.end();
  const answer = await r.response;
  r.abort();
  return { ...answer, sentWhenAnswered };
}
