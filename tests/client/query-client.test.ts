import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { apiRequest } from '../../src/lib/api-client';
import { createQueryClient } from '../../src/lib/query-client';
import { sendJson, setPageOrigin, startHttpServer } from './support/http-server';

type Server = Awaited<ReturnType<typeof startHttpServer>>;

describe('query client', () => {
  let server: Server;
  let failuresLeft: number;

  beforeEach(async () => {
    failuresLeft = 0;
    server = await startHttpServer((request, res) => {
      if (request.url === '/api/teams/1/members') return sendJson(res, 401, { error: { code: 'unauthenticated', message: 'Sign in again' } });
      if (request.url === '/api/flaky') {
        if (failuresLeft > 0) {
          failuresLeft -= 1;
          return sendJson(res, 503, { error: { code: 'service_unavailable', message: 'Database is down' } });
        }
        return sendJson(res, 200, { ok: true });
      }
      return sendJson(res, 404, { error: { code: 'not_found', message: 'No such thing' } });
    });
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    await server.close();
  });

  it('sends the user to sign-in when any query learns the session has ended', async () => {
    let redirects = 0;
    const client = createQueryClient({ onUnauthenticated: () => (redirects += 1) });
    await expect(client.fetchQuery({ queryKey: ['members'], queryFn: ({ signal }) => apiRequest('/teams/1/members', { signal }) })).rejects.toMatchObject({ status: 401 });
    expect(redirects).toBe(1);
    // A 401 is final: exactly one request, no retry.
    expect(server.requests).toHaveLength(1);
  });

  it('leaves a 401 alone where the query says it is an expected answer', async () => {
    let redirects = 0;
    const client = createQueryClient({ onUnauthenticated: () => (redirects += 1) });
    await expect(
      client.fetchQuery({ queryKey: ['me'], queryFn: () => apiRequest('/teams/1/members'), meta: { redirectOnUnauthenticated: false } }),
    ).rejects.toMatchObject({ status: 401 });
    expect(redirects).toBe(0);
  });

  it('sends the user to sign-in when a mutation is refused with 401', async () => {
    let redirects = 0;
    const client = createQueryClient({ onUnauthenticated: () => (redirects += 1) });
    const mutation = client.getMutationCache().build(client, { mutationFn: () => apiRequest('/teams/1/members', { method: 'POST', body: {} }) });
    await expect(mutation.execute(undefined)).rejects.toMatchObject({ status: 401 });
    expect(redirects).toBe(1);
  });

  it('recovers from one transient 5xx by retrying once', async () => {
    failuresLeft = 1;
    const client = createQueryClient();
    // retryDelay 0 only shortens the wait between the two attempts; the policy under test is the default `retry`.
    await expect(client.fetchQuery({ queryKey: ['flaky'], queryFn: () => apiRequest('/flaky'), retryDelay: 0 })).resolves.toEqual({ ok: true });
    expect(server.requests.filter((request) => request.url === '/api/flaky')).toHaveLength(2);
  });

  it('gives up after the single retry when the 5xx persists', async () => {
    failuresLeft = 5;
    const client = createQueryClient();
    await expect(client.fetchQuery({ queryKey: ['flaky'], queryFn: () => apiRequest('/flaky'), retryDelay: 0 })).rejects.toMatchObject({ status: 503 });
    expect(server.requests.filter((request) => request.url === '/api/flaky')).toHaveLength(2);
  });
});
