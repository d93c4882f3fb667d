import { QueryClientProvider } from '@tanstack/react-query';
import { cleanup, render, screen } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { SignUpForm } from '../../src/features/auth/components/sign-up-form';
import { createQueryClient } from '../../src/lib/query-client';
import { sendJson, setPageOrigin, startHttpServer } from './support/http-server';

type Server = Awaited<ReturnType<typeof startHttpServer>>;

describe('sign-up form', () => {
  let server: Server;

  beforeEach(async () => {
    server = await startHttpServer((_request, res) =>
      sendJson(res, 409, { error: { code: 'conflict', message: 'An account with this e-mail already exists' } }),
    );
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    cleanup();
    await server.close();
  });

  function renderForm() {
    render(
      <QueryClientProvider client={createQueryClient()}>
        <SignUpForm onSignedUp={() => undefined} />
      </QueryClientProvider>,
    );
  }

  it('names every missing field in plain words before anything is sent', async () => {
    const user = userEvent.setup();
    renderForm();
    await user.click(screen.getByRole('button', { name: 'Create team' }));

    expect(await screen.findByText('Enter your name')).toBeTruthy();
    expect(screen.getByText('Enter your e-mail address')).toBeTruthy();
    expect(screen.getByText('Password must be at least 10 characters')).toBeTruthy();
    expect(screen.getByText('Name your team')).toBeTruthy();
    expect(server.requests).toHaveLength(0);
  });

  it('treats a name of only spaces as missing', async () => {
    const user = userEvent.setup();
    renderForm();
    await user.type(screen.getByLabelText('Your name'), '   ');
    await user.tab();
    expect(await screen.findByText('Enter your name')).toBeTruthy();
  });

  it("shows the server's message when the address is taken", async () => {
    const user = userEvent.setup();
    renderForm();
    await user.type(screen.getByLabelText('Your name'), 'Ada Ferrow');
    await user.type(screen.getByLabelText('Work e-mail'), 'ada@tidewater.test');
    await user.type(screen.getByLabelText('Password'), 'harbour-admin-1');
    await user.type(screen.getByLabelText('Team name'), 'Tidewater Survey Link');
    await user.click(screen.getByRole('button', { name: 'Create team' }));

    expect((await screen.findByRole('alert')).textContent).toBe('An account with this e-mail already exists');
    expect(JSON.parse(server.requests[0].body)).toEqual({
      name: 'Ada Ferrow',
      email: 'ada@tidewater.test',
      password: 'harbour-admin-1',
      teamName: 'Tidewater Survey Link',
    });
  });
});
