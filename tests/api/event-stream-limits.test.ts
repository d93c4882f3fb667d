// Run event streams are capped per user, and a member's streams of a team end when the member is removed or the
// session that opened them ends (sign-out, password change).
// The runs here stay queued (the job runner is not started), so a stream never ends by itself.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import request from 'supertest';
import { addMember, bearer, testPassword, type Session } from '../helpers/api';
import { buildWorld, type World } from './hostile/world';

let w: World;
beforeAll(async () => {
  w = await buildWorld({ SSE_MAX_STREAMS_PER_USER: '2' });
});
afterAll(async () => {
  await w?.close();
});

interface OpenStream {
  status: number;
  /** Resolves when the server ends the stream (or the test aborts it). */
  ended: Promise<void>;
  abort(): void;
  json?: { error: { code: string; message: string } };
}

/** Opens a run's event stream and reads it in the background until it ends, once the first event (the snapshot) is in. */
async function openStream(session: Session, runId = w.runIds[0]): Promise<OpenStream> {
  const controller = new AbortController();
  const res = await fetch(`${w.base}/api/teams/${w.teamId}/runs/${runId}/events`, { headers: bearer(session), signal: controller.signal });
  if (!res.headers.get('content-type')?.startsWith('text/event-stream')) {
    return { status: res.status, ended: Promise.resolve(), abort: () => undefined, json: (await res.json()) as OpenStream['json'] };
  }
  const reader = res.body!.getReader();
  const decoder = new TextDecoder();
  let seen = '';
  while (!seen.includes('event: snapshot')) {
    const { value, done } = await reader.read();
    if (done) break;
    seen += decoder.decode(value, { stream: true });
  }
  const ended = (async () => {
    try {
      while (!(await reader.read()).done);
    } catch {
      // aborted by the test
    }
  })();
  return { status: res.status, ended, abort: () => controller.abort() };
}

describe('run event streams', () => {
  it("refuses a user's stream over the cap with 429, counts each user apart, and takes one again after another closes", async () => {
    const first = await openStream(w.viewer);
    const second = await openStream(w.viewer, w.runIds[1]);
    expect([first.status, second.status]).toEqual([200, 200]);
    const third = await openStream(w.viewer);
    expect(third.status).toBe(429);
    expect(third.json?.error.code).toBe('rate_limited');
    // Another member's streams are counted apart.
    const engineers = await openStream(w.engineer);
    expect(engineers.status).toBe(200);
    first.abort();
    await first.ended;
    // The server notices the closed connection on its own time; wait for the place, not for a time.
    let again: OpenStream | undefined;
    for (let i = 0; i < 200 && again?.status !== 200; i += 1) {
      again = await openStream(w.viewer);
      if (again.status !== 200) await new Promise((r) => setTimeout(r, 25));
    }
    expect(again?.status).toBe(200);
    for (const s of [second, engineers, again!]) s.abort();
  });

  it("ends a member's open streams of the team as soon as an admin removes them, and refuses them after", async () => {
    const member = await addMember(w.t, w.admin, 'viewer');
    const streams = [await openStream(member), await openStream(member, w.runIds[1])];
    expect(streams.map((s) => s.status)).toEqual([200, 200]);
    const kept = await openStream(w.engineer);
    const removed = await request(w.t.app).delete(`/api/teams/${w.teamId}/members/${member.user.id}`).set(bearer(w.admin));
    expect(removed.status).toBe(204);
    // Both end without the test closing them.
    await Promise.all(streams.map((s) => s.ended));
    const after = await openStream(member);
    expect(after.status).toBe(404);
    // The removal ended only that member's streams.
    let keptEnded = false;
    void kept.ended.then(() => (keptEnded = true));
    const probe = await openStream(w.engineer, w.runIds[1]);
    expect(probe.status).toBe(200);
    expect(keptEnded).toBe(false);
    kept.abort();
    probe.abort();
  });

  it("keeps a member's streams open when their role changes to one that may still read", async () => {
    const streams = await openStream(w.spare);
    expect(streams.status).toBe(200);
    let ended = false;
    void streams.ended.then(() => (ended = true));
    const changed = await request(w.t.app).patch(`/api/teams/${w.teamId}/members/${w.spare.user.id}`).set(bearer(w.admin)).send({ role: 'engineer' });
    expect(changed.status).toBe(200);
    // A stream opened after the change has been answered, so the change's re-check (one query) has had its turn.
    const later = await openStream(w.spare, w.runIds[1]);
    expect(later.status).toBe(200);
    expect(ended).toBe(false);
    streams.abort();
    later.abort();
  });

  it('ends the streams a session opened when that session signs out, and refuses the token after', async () => {
    const member = await addMember(w.t, w.admin, 'viewer');
    const stream = await openStream(member);
    expect(stream.status).toBe(200);
    const out = await request(w.t.app).post('/api/auth/logout').set(bearer(member));
    expect(out.status).toBe(204);
    // Ends without the test closing it.
    await stream.ended;
    expect((await openStream(member)).status).toBe(401);
  });

  it("ends a user's other sessions' streams on a password change and keeps the changing session's", async () => {
    const member = await addMember(w.t, w.admin, 'viewer');
    const login = await request(w.t.app).post('/api/auth/login').send({ email: member.user.email, password: testPassword });
    expect(login.status).toBe(200);
    const other = { ...member, token: login.body.token as string };
    const otherStream = await openStream(other);
    const ownStream = await openStream(member, w.runIds[1]);
    expect([otherStream.status, ownStream.status]).toEqual([200, 200]);
    let ownEnded = false;
    void ownStream.ended.then(() => (ownEnded = true));
    const changed = await request(w.t.app)
      .post('/api/me/password')
      .set(bearer(member))
      .send({ currentPassword: testPassword, newPassword: 'a-new-harbour-passphrase' });
    expect(changed.status).toBe(204);
    await otherStream.ended;
    // The re-check that ended the other stream has run; the caller's own stream is still open.
    expect(ownEnded).toBe(false);
    ownStream.abort();
  });
});
