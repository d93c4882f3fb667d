import type { z } from 'zod';
import { env } from '../config/env';

export type EventHandlers = Record<string, (data: unknown) => void>;

export type EventStreamOptions = {
  /** Path under the API root, as for apiRequest ("/teams/1/runs/2/events"). */
  path: string;
  /** One handler per event name; data arrives parsed from JSON. Unknown names are ignored. */
  on: EventHandlers;
  /** Called with true once the stream is open, false when it drops (the browser then retries by itself). */
  onConnectionChange?: (open: boolean) => void;
};

/**
 * Opens a server-sent event stream (WHATWG HTML, "Server-sent events") on this origin with the session cookie.
 * EventSource reconnects on its own after a drop, honouring the server's `retry:`; a stream the server ended on
 * purpose (after its `end` event) must be closed here, or the browser would reopen it. Returns the closer.
 */
export function openEventStream({ path, on, onConnectionChange }: EventStreamOptions): () => void {
  if (typeof EventSource === 'undefined') {
    onConnectionChange?.(false);
    return () => {};
  }
  const source = new EventSource(`${env.apiBasePath}${path}`, { withCredentials: true });
  let closed = false;
  const close = () => {
    if (closed) return;
    closed = true;
    source.close();
    onConnectionChange?.(false);
  };
  source.onopen = () => onConnectionChange?.(true);
  source.onerror = () => {
    // CLOSED means the browser gave up (e.g. a 401 or 404 answer); CONNECTING means it is retrying.
    if (source.readyState === EventSource.CLOSED) close();
    else onConnectionChange?.(false);
  };
  for (const [name, handler] of Object.entries(on)) {
    source.addEventListener(name, (event) => {
      if (closed) return;
      let data: unknown;
      try {
        data = JSON.parse((event as MessageEvent<string>).data);
      } catch {
        return;
      }
      handler(data);
    });
  }
  return close;
}

/** A handler that checks the event's data against a contract schema first and drops what does not match. */
export function parsed<T>(schema: z.ZodType<T>, handler: (data: T) => void): (data: unknown) => void {
  return (data) => {
    const result = schema.safeParse(data);
    if (result.success) handler(result.data);
  };
}
