import { QueryClientProvider } from '@tanstack/react-query';
import { cleanup, render, screen } from '@testing-library/react';
import userEvent from '@testing-library/user-event';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { SignUpForm } from '../../src/features/auth/components/sign-up-form';
import { finishSignUpFormSchema } from '../../src/features/auth/schemas';
import { createQueryClient } from '../../src/lib/query-client';
import { sendJson, setPageOrigin, startHttpServer, type RecordedRequest } from './support/http-server';

type Server = Awaited<ReturnType<typeof startHttpServer>>;

describe('sign-up form', () => {
  let server: Server;
  let answer: (request: RecordedRequest) => [number, unknown];

  beforeEach(async () => {
    answer = () => [202, { status: 'accepted' }];
    server = await startHttpServer((request, res) => sendJson(res, ...answer(request)));
    setPageOrigin(server.origin);
  });

  afterEach(async () => {
    cleanup();
    await server.close();
  });

  function renderForm() {
    render(
      <QueryClientProvider client={createQueryClient()}>
        <SignUpForm />
      </QueryClientProvider>,
    );
  }

  it('asks for the address in plain words before anything is sent', async () => {
    const user = userEvent.setup();
    renderForm();
    await user.click(screen.getByRole('button', { name: 'Send sign-up link' }));
    expect(await screen.findByText('Enter your e-mail address')).toBeTruthy();
    expect(server.requests).toHaveLength(0);
  });

  it('sends the address alone and tells the person to check their inbox', async () => {
    const user = userEvent.setup();
    renderForm();
    await user.type(screen.getByLabelText('Work e-mail'), 'Ada@Bramblecove.test');
    await user.click(screen.getByRole('button', { name: 'Send sign-up link' }));

    expect((await screen.findByRole('status')).textContent).toContain('Check your inbox');
    expect(server.requests[0].url).toBe('/api/auth/signup');
    expect(JSON.parse(server.requests[0].body)).toEqual({ email: 'ada@bramblecove.test' });
  });

  it("shows the server's message when it refuses, such as a rate limit", async () => {
    answer = () => [429, { error: { code: 'rate_limited', message: 'Too many sign-up requests from your network; try again later' } }];
    const user = userEvent.setup();
    renderForm();
    await user.type(screen.getByLabelText('Work e-mail'), 'ada@bramblecove.test');
    await user.click(screen.getByRole('button', { name: 'Send sign-up link' }));
    expect((await screen.findByRole('alert')).textContent).toBe('Too many sign-up requests from your network; try again later');
  });
});

describe('the finish-sign-up form rules', () => {
  const valid = { name: 'Ada Ferrow', password: 'harbour-admin-1', confirm: 'harbour-admin-1', teamName: 'Bramblecove' };

  it('accepts a password of exactly 72 UTF-8 bytes and refuses one of 73, whatever its character count', () => {
    // 24 × "€" (U+20AC, three bytes in UTF-8, RFC 3629 §3) = 72 bytes in 24 characters.
    const euro72 = '€'.repeat(24);
    expect(finishSignUpFormSchema.safeParse({ ...valid, password: euro72, confirm: euro72 }).success).toBe(true);
    const over = `${euro72}a`;
    const result = finishSignUpFormSchema.safeParse({ ...valid, password: over, confirm: over });
    expect(result.success).toBe(false);
    expect(result.error?.issues[0].message).toMatch(/at most 72 bytes/);
  });

  it('names a repeated password that differs', () => {
    const result = finishSignUpFormSchema.safeParse({ ...valid, confirm: 'something-else-1' });
    expect(result.error?.issues.map((i) => i.message)).toEqual(['The two passwords differ']);
  });
});
