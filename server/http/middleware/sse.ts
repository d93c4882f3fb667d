import type { Request, Response } from 'express';

export interface EventStream {
  send(event: string, data: unknown): void;
  end(): void;
  readonly closed: boolean;
}

/** Every 15 s a comment line, so proxies and browsers keep an idle stream open (the WHATWG HTML SSE section advises this). */
export const SSE_HEARTBEAT_MS = 15_000;

/**
 * Turns the response into a text/event-stream (WHATWG HTML, "Server-sent events"). `onClose` runs once,
 * whether the client went away or the server ended the stream.
 */
const openStreams = new Set<EventStream>();

/** Ends every open stream: a stopping server would otherwise wait for clients that never hang up. */
export function endAllEventStreams(): void {
  for (const s of [...openStreams]) s.end();
}

export function openEventStream(req: Request, res: Response, onClose: () => void, heartbeatMs = SSE_HEARTBEAT_MS): EventStream {
  res.status(200);
  res.set({
    'Content-Type': 'text/event-stream; charset=utf-8',
    'Cache-Control': 'no-store',
    Connection: 'keep-alive',
    // Tells buffering reverse proxies (nginx) to pass events through as they are written.
    'X-Accel-Buffering': 'no',
  });
  res.flushHeaders();
  let closed = false;
  let id = 0;
  const heartbeat = setInterval(() => {
    if (!closed) res.write(': heartbeat\n\n');
  }, heartbeatMs);
  heartbeat.unref();
  const finish = () => {
    if (closed) return;
    closed = true;
    openStreams.delete(stream);
    clearInterval(heartbeat);
    onClose();
  };
  req.on('close', finish);
  res.on('close', finish);
  res.write('retry: 3000\n\n');
  const stream: EventStream = {
    send(event, data) {
      if (closed) return;
      id += 1;
      res.write(`id: ${id}\nevent: ${event}\ndata: ${JSON.stringify(data)}\n\n`);
    },
    end() {
      if (closed) return;
      res.end();
      finish();
    },
    get closed() {
      return closed;
    },
  };
  openStreams.add(stream);
  return stream;
}

/** A source the stream replays: a first snapshot, then events until it ends or the client leaves. */
export interface WatchedSource {
  snapshot: unknown;
  terminal: boolean;
  close(): void;
  listen(send: (event: 'progress' | 'state' | 'end', data: unknown) => void): void;
}

/** Streams a watched source: `snapshot` first; `end` (then close) once the source reaches a terminal state. */
export function streamSource(req: Request, res: Response, source: WatchedSource): void {
  const stream = openEventStream(req, res, () => source.close());
  stream.send('snapshot', { run: source.snapshot });
  if (source.terminal) {
    stream.send('end', { run: source.snapshot });
    stream.end();
    return;
  }
  source.listen((event, data) => {
    stream.send(event, data);
    if (event === 'end') stream.end();
  });
}
