// Bodies are read only once the server knows who sends them, within the limit of the route, and never
// inflated: an anonymous, outside or under-privileged caller is answered before a large body is through,
// and a compressed body is refused from its header alone.
import net from 'node:net';
import { gzipSync, deflateSync } from 'node:zlib';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { sendUntilAnswered } from '../../helpers/raw-request';
import { call, isErrorShape } from './routes';
import { buildWorld, codebookDocument, rowCounts, type World } from './world';

const KiB = 1024;
const MiB = 1024 * KiB;
let w: World;
beforeAll(async () => {
  w = await buildWorld();
});
afterAll(async () => {
  await w?.close();
});

const importUrl = (teamId = w.teamId) => `/api/teams/${teamId}/codebooks/import`;

/** 60 MiB of a codebook-looking document: under the import's 64 MiB limit, so only the caller can be the reason to refuse it. */
const bigImport = { head: Buffer.from('{"format":"cellwright-codebook","codewords":[['), filler: Buffer.from('1.5,'.repeat(MiB / 4)), total: 60 * MiB };

function expectError(answer: { status: number; json: unknown }, status: number, code: string) {
  expect(answer.status, JSON.stringify(answer.json)).toBe(status);
  expect(isErrorShape(answer.json)).toBe(true);
  expect((answer.json as { error: { code: string } }).error.code).toBe(code);
}

describe('a large body from a caller who may not send it', () => {
  it('answers an anonymous 60 MiB codebook import with 401 while the body is still being sent', async () => {
    const answer = await sendUntilAnswered(w.base, 'POST', importUrl(), { 'Content-Type': 'application/json' }, bigImport);
    expectError(answer, 401, 'unauthenticated');
    // The server could only answer before the end if it never waited for the body (let alone parsed it).
    expect(answer.sentWhenAnswered).toBeLessThan(bigImport.total);
  });

  it("answers a viewer's 60 MiB codebook import with 403 while the body is still being sent", async () => {
    const before = await rowCounts(w);
    const answer = await sendUntilAnswered(w.base, 'POST', importUrl(), { 'Content-Type': 'application/json', Authorization: `Bearer ${w.viewer.token}` }, bigImport);
    expectError(answer, 403, 'forbidden');
    expect(answer.sentWhenAnswered).toBeLessThan(bigImport.total);
    expect(await rowCounts(w)).toEqual(before);
  });

  it('answers a member of another team with 404 before reading their import body', async () => {
    const answer = await sendUntilAnswered(w.base, 'POST', importUrl(), { 'Content-Type': 'application/json', Authorization: `Bearer ${w.outsider.token}` }, bigImport);
    expectError(answer, 404, 'not_found');
    expect(answer.sentWhenAnswered).toBeLessThan(bigImport.total);
  });

  it('answers an anonymous 2 MiB body on a team route with 401, not by reading it', async () => {
    const body = { head: Buffer.from('{"name":"'), filler: Buffer.alloc(64 * KiB, 'a'), total: 2 * MiB };
    const answer = await sendUntilAnswered(w.base, 'POST', `/api/teams/${w.teamId}/image-sets`, { 'Content-Type': 'application/json' }, body);
    expectError(answer, 401, 'unauthenticated');
  });
});

it('keeps the connection open after an early answer until the rest of the body is through, so the answer is not lost', async () => {
  // Raw TCP, as a client that asked for Connection: close and keeps sending after the answer. Were the server to
  // close right after answering, the bytes still coming would meet a closed socket and the connection would be
  // reset (RFC 9112 §9.6), the answer with it if the client had not read it yet.
  const total = 16 * MiB;
  const url = new URL(w.base);
  const socket = net.connect(Number(url.port), url.hostname);
  let failure: string | null = null;
  socket.on('error', (err: NodeJS.ErrnoException) => (failure ??= err.code ?? err.message));
  const closed = new Promise<void>((resolve) => socket.on('close', () => resolve()));
  let received = '';
  const answered = new Promise<void>((resolve) =>
    socket.on('data', (c: Buffer) => {
      received += c.toString('latin1');
      const length = /content-length: (\d+)/i.exec(received)?.[1];
      const bodyStart = received.indexOf('\r\n\r\n');
      if (length && bodyStart >= 0 && received.length - bodyStart - 4 >= Number(length)) resolve();
    }),
  );
  const write = (chunk: Buffer | string) => new Promise<void>((resolve) => socket.write(chunk, () => resolve()));
  await write(`POST ${importUrl()} HTTP/1.1\r\nHost: ${url.host}\r\nContent-Type: application/json\r\nContent-Length: ${total}\r\nConnection: close\r\n\r\n`);
  await write(bigImport.head);
  await answered;
  expect(received).toMatch(/^HTTP\/1\.1 401 /);
  expect(JSON.parse(received.slice(received.indexOf('\r\n\r\n') + 4))).toMatchObject({ error: { code: 'unauthenticated' } });
  for (let sent = bigImport.head.length; sent < total && !failure; sent += MiB) await write(bigImport.filler.subarray(0, Math.min(MiB, total - sent)));
  socket.end();
  await closed;
  expect(failure).toBeNull();
});

describe('compressed bodies', () => {
  // 9 MB of JSON numbers deflate to a few KiB: the ratio that makes inflating before any check dangerous.
  const inflated = `{"format":"cellwright-codebook","codewords":[[${'1.5,'.repeat(9 * 1000 * 1000 / 4)}1.5]]}`;
  const bomb = gzipSync(inflated);

  it('refuses an anonymous gzip body with 415 from its header, before the caller is even asked for', async () => {
    expect(bomb.length).toBeLessThan(64 * KiB);
    const res = await call(w, { method: 'POST', body: 'json' }, importUrl(), { raw: bomb, headers: { 'Content-Encoding': 'gzip' } });
    expectError(res, 415, 'unsupported_media_type');
    expect((res.json as { error: { message: string } }).error.message).toMatch(/uncompressed/);
  });

  it("refuses an engineer's gzip-encoded codebook with 415 and imports nothing", async () => {
    const before = await rowCounts(w);
    const res = await call(w, { method: 'POST', body: 'json' }, importUrl(), {
      token: w.engineer.token,
      raw: gzipSync(JSON.stringify(codebookDocument(31))),
      headers: { 'Content-Encoding': 'gzip' },
    });
    expectError(res, 415, 'unsupported_media_type');
    expect(await rowCounts(w)).toEqual(before);
  });

  it('refuses deflate and br on any route, and takes identity as no encoding', async () => {
    const url = `/api/teams/${w.teamId}/image-sets`;
    const deflated = await call(w, { method: 'POST', body: 'json' }, url, { token: w.engineer.token, raw: deflateSync('{"name":"Squeezed"}'), headers: { 'Content-Encoding': 'deflate' } });
    expectError(deflated, 415, 'unsupported_media_type');
    const br = await call(w, { method: 'POST', body: 'json' }, url, { token: w.engineer.token, raw: '{"name":"Squeezed"}', headers: { 'Content-Encoding': 'br' } });
    expectError(br, 415, 'unsupported_media_type');
    const identity = await call(w, { method: 'POST', body: 'json' }, url, { token: w.engineer.token, raw: '{"name":"Plain"}', headers: { 'Content-Encoding': 'identity' } });
    expect(identity.status).toBe(201);
  });
});

describe('per-route body limits', () => {
  it('refuses a 20 KiB sign-in body with 413: anonymous routes take 16 KiB', async () => {
    const res = await call(w, { method: 'POST', body: 'json' }, '/api/auth/login', { raw: JSON.stringify({ email: w.viewer.user.email, password: 'x'.repeat(20 * KiB) }) });
    expectError(res, 413, 'payload_too_large');
  });

  it('takes up to 1 MiB on a signed-in route and refuses more with 413', async () => {
    const url = `/api/teams/${w.teamId}/image-sets`;
    // Large but within the limit: refused by the contract (the description is at most 2000 characters), not by size.
    const within = await call(w, { method: 'POST', body: 'json' }, url, { token: w.engineer.token, raw: JSON.stringify({ name: 'Long', description: 'd'.repeat(900 * KiB) }) });
    expectError(within, 400, 'validation_failed');
    const over = await call(w, { method: 'POST', body: 'json' }, url, { token: w.engineer.token, raw: JSON.stringify({ name: 'Long', description: 'd'.repeat(MiB + KiB) }) });
    expectError(over, 413, 'payload_too_large');
  });

  it("reads an engineer's 2 MiB codebook document: the import keeps its own large limit", async () => {
    const doc = JSON.stringify({ ...codebookDocument(32), padding: 'p'.repeat(2 * MiB) });
    const res = await call(w, { method: 'POST', body: 'json' }, importUrl(), { token: w.engineer.token, raw: doc });
    // Parsed and judged by the codebook schema (an unknown field), not refused by size.
    expect(res.status, res.text).toBe(400);
    expect(res.text).toMatch(/padding/);
  });

  it('checks path parameters before reading the body', async () => {
    const res = await call(w, { method: 'PATCH', body: 'json' }, `/api/teams/${w.teamId}/image-sets/not-an-id`, { token: w.engineer.token, raw: '{ this is not json' });
    expectError(res, 400, 'validation_failed');
    expect(JSON.stringify(res.json)).toMatch(/"location":"params"/);
  });
});
