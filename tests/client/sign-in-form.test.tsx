import { QueryClientProvider } from '@tanstack/react-query';
import { cleanup, render, screen } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { createMemoryRouter, RouterProvider } from 'react-router-dom';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { SignInForm } from '../../src/features/auth/components/sign-in-form';
import { createQueryClient } from '../../src/lib/query-client';
import { sendJson, setPageOrigin, startHttpServer } from './support/http-server';

type Server = Awaited<ReturnType<typeof startHttpServer>>;

const wrongPasswordMessage = 'That e-mail and password do not match an account';

function renderSignIn(onSignedIn: (email: string) => void = () => undefined) {
  // A fresh client per test, retries as in the app (a 401 is never retried).
  let unauthenticatedRedirects = 0;
  const queryClient = createQueryClient({ onUnauthenticated: () => (unauthenticatedRedirects += 1) });
  const router = createMemoryRouter([
    { path: '/sign-in', element: <SignInForm onSignedIn={(result) => onSignedIn(result.user.email)} /> },
    { path: '/forgot-password', element: <p>forgot</p> },
  ], { initialEntries: ['/sign-in'] });
  render(
    <QueryClientProvider client={queryClient}>
      <RouterProvider router={router} />
    </QueryClientProvider>,
  );
  return { redirects: () => unauthenticatedRedirects };
}

describe('sign-in form', () => {
  let server: Server;

  beforeEach(async () => {
    server = await startHttpServer((request, res) => {
      if (request.url !== '/api/auth/login' || request.method !== 'POST') return sendJson(res, 404, { error: { code: 'not_found', message: 'No route' } });
      const { email, password } = JSON.parse(request.body) as { email: string; password: string };
      if (email === 'ada@bramblecove.test' && password === 'harbour-admin-1') {
        return sendJson(res, 200, { token: 'jwt', user: { id: 1, email, name: 'Ada Ferrow', createdAt: '2025-01-01T00:00:00.000Z' } });
      }
      return sendJson(res, 401, { error: { code: 'unauthenticated', message: wrongPasswordMessage } });
    });
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    cleanup();
    await server.close();
  });

  it('shows field errors from the schema and sends nothing while the form is invalid', async () => {
    const user = userEvent.setup();
    renderSignIn();

    await user.click(screen.getByRole('button', { name: 'Sign in' }));

    const email = screen.getByLabelText('E-mail');
    const password = screen.getByLabelText('Password');
    expect(await screen.findByText('Enter your e-mail address')).toBeTruthy();
    expect(screen.getByText('Enter your password')).toBeTruthy();
    // Each error is tied to its field, so a screen reader reads it with the field.
    expect(email.getAttribute('aria-invalid')).toBe('true');
    expect(document.getElementById(email.getAttribute('aria-describedby') ?? '')?.textContent).toBe('Enter your e-mail address');
    expect(document.getElementById(password.getAttribute('aria-describedby') ?? '')?.textContent).toBe('Enter your password');

    await user.type(email, 'ada-at-bramblecove');
    await user.tab();
    expect(await screen.findByText('Enter a valid e-mail address, such as name@example.com')).toBeTruthy();

    expect(server.requests).toHaveLength(0);
  });

  it("shows the server's message when the credentials are refused with 401, without bouncing to sign-in", async () => {
    const user = userEvent.setup();
    const { redirects } = renderSignIn();

    await user.type(screen.getByLabelText('E-mail'), '  Ada@Bramblecove.test ');
    await user.type(screen.getByLabelText('Password'), 'not-the-password');
    await user.click(screen.getByRole('button', { name: 'Sign in' }));

    const alert = await screen.findByRole('alert');
    expect(alert.textContent).toBe(wrongPasswordMessage);
    expect(server.requests).toHaveLength(1);
    // The form sends the address the way accounts store it: trimmed and lower-case.
    expect(JSON.parse(server.requests[0].body)).toEqual({ email: 'ada@bramblecove.test', password: 'not-the-password' });
    expect(redirects()).toBe(0);
  });

  it('reports the signed-in user when the credentials are accepted', async () => {
    const user = userEvent.setup();
    const signedIn: string[] = [];
    renderSignIn((email) => signedIn.push(email));

    await user.type(screen.getByLabelText('E-mail'), 'ada@bramblecove.test');
    await user.type(screen.getByLabelText('Password'), 'harbour-admin-1');
    await user.click(screen.getByRole('button', { name: 'Sign in' }));

    await expect.poll(() => signedIn).toEqual(['ada@bramblecove.test']);
    expect(screen.queryByRole('alert')).toBeNull();
  });
});
