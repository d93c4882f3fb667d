import type { Request, RequestHandler, Response } from 'express';
import type { Role } from '../../contracts';
import { rateLimited } from '../../errors';
import { createConcurrencyGate } from './concurrency-gate';
import type { MembershipLookup } from './require-team-role';

export interface EventStream {
  send(event: string, data: unknown): void;
  end(): void;
  readonly closed: boolean;
}

/** Every 15 s a comment line, so proxies and browsers keep an idle stream open (the WHATWG HTML SSE section advises this). */
export const SSE_HEARTBEAT_MS = 15_000;

const openStreams = new Set<EventStream>();

/** Ends every open stream: a stopping server would otherwise wait for clients that never hang up. */
export function endAllEventStreams(): void {
  for (const s of [...openStreams]) s.end();
}

/**
 * Turns the response into a text/event-stream (WHATWG HTML, "Server-sent events"). `onClose` runs once,
 * whether the client went away or the server ended the stream; `onHeartbeat` runs with every heartbeat while
 * the stream is open (createTeamEventStreams re-checks the reader's membership there).
 */
export function openEventStream(req: Request, res: Response, onClose: () => void, heartbeatMs = SSE_HEARTBEAT_MS, onHeartbeat?: () => void): EventStream {
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
    if (closed) return;
    res.write(': heartbeat\n\n');
    onHeartbeat?.();
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
export function streamSource(req: Request, res: Response, source: WatchedSource, onHeartbeat?: (stream: EventStream) => void): EventStream {
  const stream: EventStream = openEventStream(req, res, () => source.close(), SSE_HEARTBEAT_MS, () => onHeartbeat?.(stream));
  stream.send('snapshot', { run: source.snapshot });
  if (source.terminal) {
    stream.send('end', { run: source.snapshot });
    stream.end();
    return stream;
  }
  source.listen((event, data) => {
    stream.send(event, data);
    if (event === 'end') stream.end();
  });
  return stream;
}

/**
 * The team streams of one app: at most `maxPerUser` open per user (the next is refused with 429 before it
 * opens), and each ends as soon as its reader may no longer read the team — re-checked when told a membership
 * changed (recheck) and at every heartbeat, for changes made where no signal reaches this process.
 */
export function createTeamEventStreams(deps: {
  maxPerUser: number;
  teams: MembershipLookup;
  /** Whether the session that opened a stream is still live; a signed-out or replaced session's streams end. */
  sessionIsLive(userId: number, sessionId: string): Promise<boolean>;
}) {
  const gate = createConcurrencyGate({ perUser: deps.maxPerUser });
  interface Open {
    teamId: number;
    userId: number;
    roles: readonly Role[];
    sessionId: string | undefined;
    stream: EventStream;
  }
  const open = new Set<Open>();

  async function check(entry: Open): Promise<void> {
    let membership: { role: Role } | null;
    let live: boolean;
    try {
      [membership, live] = await Promise.all([
        deps.teams.membership(entry.teamId, entry.userId),
        entry.sessionId === undefined ? true : deps.sessionIsLive(entry.userId, entry.sessionId),
      ]);
    } catch {
      return; // the database is out of reach: keep the stream, the next heartbeat asks again
    }
    const allowed = live && membership !== null && (entry.roles.length === 0 || entry.roles.includes(membership.role));
    if (!allowed) entry.stream.end();
  }

  /** Holds one of the caller's places until the response closes; put it after authenticate and the role check. */
  const reserve: RequestHandler = (req, res, next) => {
    const release = gate.acquire(req.user!.id);
    if (!release) return next(rateLimited(`At most ${deps.maxPerUser} live views may be open at once; close one in another tab or window`));
    res.once('close', release);
    next();
  };

  return {
    reserve,
    /** streamSource for the caller's team (req.membership), kept only while the caller holds one of `roles` (any, if none). */
    serve(req: Request, res: Response, source: WatchedSource, roles: readonly Role[] = []): void {
      const entry = { teamId: req.membership!.teamId, userId: req.user!.id, roles, sessionId: req.sessionId } as Open;
      res.once('close', () => open.delete(entry));
      entry.stream = streamSource(req, res, source, () => void check(entry));
      if (!entry.stream.closed) open.add(entry);
    },
    /** Ends the user's streams whose session has ended; resolves once checked. */
    async recheckUser(userId: number): Promise<void> {
      await Promise.all([...open].filter((e) => e.userId === userId).map(check));
    },
    /** Ends the user's streams of the team that the membership no longer allows; resolves once checked. */
    async recheck(teamId: number, userId: number): Promise<void> {
      await Promise.all([...open].filter((e) => e.teamId === teamId && e.userId === userId).map(check));
    },
  };
}

export type TeamEventStreams = ReturnType<typeof createTeamEventStreams>;
