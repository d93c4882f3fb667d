import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { z } from 'zod';
import { ApiError, apiRequest, fieldErrorsOf } from '../../src/lib/api-client';
import { shouldRetry } from '../../src/lib/query-client';
import { sendJson, setPageOrigin, startHttpServer } from './support/http-server';

type Server = Awaited<ReturnType<typeof startHttpServer>>;

describe('api client', () => {
  let server: Server;
  let held: Array<() => void>;

  beforeEach(async () => {
    held = [];
    server = await startHttpServer((request, res) => {
      switch (request.url) {
        case '/api/teams/7/members/3':
          return sendJson(res, 409, { error: { code: 'conflict', message: 'A team needs at least one admin', details: { fields: { role: 'Keep one admin' } } } });
        case '/api/me':
          return sendJson(res, 200, { user: { id: 1, email: 'ada@bramblecove.test', name: 'Ada Ferrow', createdAt: '2025-01-01T00:00:00.000Z' }, teams: [] });
        case '/api/broken-proxy':
          res.writeHead(502, { 'Content-Type': 'text/html' });
          return res.end('<html>bad gateway</html>');
        case '/api/auth/logout':
          res.writeHead(204);
          return res.end();
        case '/api/slow':
          // Answers only when the test lets it go, or never if the client aborts first.
          held.push(() => sendJson(res, 200, { ok: true }));
          return;
        default:
          return sendJson(res, 404, { error: { code: 'not_found', message: 'No such thing' } });
      }
    });
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    held.forEach((release) => release());
    await server.close();
  });

  it('turns the error body into an ApiError with its status, code, message and details', async () => {
    const failure = await apiRequest('/teams/7/members/3', { method: 'PATCH', body: { role: 'viewer' } }).catch((error: unknown) => error);
    expect(failure).toBeInstanceOf(ApiError);
    const error = failure as ApiError;
    expect(error.status).toBe(409);
    expect(error.code).toBe('conflict');
    expect(error.message).toBe('A team needs at least one admin');
    expect(fieldErrorsOf(error)).toEqual({ role: 'Keep one admin' });
  });

  it('sends JSON bodies with a content type and asks for JSON back', async () => {
    await apiRequest('/teams/7/members/3', { method: 'PATCH', body: { role: 'viewer' } }).catch(() => undefined);
    const [request] = server.requests;
    expect(request.method).toBe('PATCH');
    expect(request.headers['content-type']).toBe('application/json');
    expect(request.headers.accept).toBe('application/json');
    expect(JSON.parse(request.body)).toEqual({ role: 'viewer' });
  });

  it('checks a successful answer against the contract schema', async () => {
    const schema = z.object({ user: z.object({ email: z.string() }), teams: z.array(z.unknown()) });
    await expect(apiRequest('/me', { schema })).resolves.toMatchObject({ user: { email: 'ada@bramblecove.test' } });

    const wrong = z.object({ token: z.string() });
    await expect(apiRequest('/me', { schema: wrong })).rejects.toMatchObject({ name: 'ApiError', code: 'invalid_response', status: 200 });
  });

  it('gives a status-derived code when the body is not the API error shape', async () => {
    await expect(apiRequest('/broken-proxy')).rejects.toMatchObject({ name: 'ApiError', status: 502, code: 'internal' });
  });

  it('resolves an empty 204 answer to undefined', async () => {
    await expect(apiRequest('/auth/logout', { method: 'POST' })).resolves.toBeUndefined();
  });

  it('reports an unreachable server as a network error with status 0', async () => {
    await server.close();
    await expect(apiRequest('/me')).rejects.toMatchObject({ name: 'ApiError', status: 0, code: 'network_error' });
  });

  it('forwards the abort signal to fetch, so a cancelled query stops its request', async () => {
    const controller = new AbortController();
    const pending = apiRequest('/slow', { signal: controller.signal });
    await expect.poll(() => server.requests.some((request) => request.url === '/api/slow')).toBe(true);
    controller.abort();
    await expect(pending).rejects.toMatchObject({ name: 'AbortError' });
  });
});

describe('query retry policy', () => {
  it('never retries a 4xx answer', () => {
    expect(shouldRetry(0, new ApiError(404, 'not_found', 'gone'))).toBe(false);
    expect(shouldRetry(0, new ApiError(401, 'unauthenticated', 'signed out'))).toBe(false);
  });

  it('retries a 5xx or network failure exactly once', () => {
    expect(shouldRetry(0, new ApiError(503, 'service_unavailable', 'db down'))).toBe(true);
    expect(shouldRetry(0, new ApiError(0, 'network_error', 'offline'))).toBe(true);
    expect(shouldRetry(1, new ApiError(503, 'service_unavailable', 'db down'))).toBe(false);
  });
});
