// Mail leaves through the queue: written in the business transaction, delivered after the commit by the sender,
// retried with exponential backoff a bounded number of times. The clock is moved by hand, so no test waits for time.
import type { AddressInfo } from 'node:net';
import request from 'supertest';
import { SMTPServer } from 'smtp-server';
import { afterEach, describe, expect, it } from 'vitest';
import { createMailSender, createMailTransport } from '../../server/services';
import { createTestApp, uniqueEmail, type TestApp } from '../helpers/api';
import { manualClock } from '../helpers/clock';
import { linkToken, mailFor, waitForMail } from '../helpers/mailbox';

let t: TestApp | undefined;
afterEach(async () => {
  await t?.close();
  t = undefined;
});

const rowFor = (app: TestApp, email: string) => app.db.knex('mail_queue').where({ recipient: email }).first();

describe('the mail queue', () => {
  it('delivers mail asked for while SMTP is down once it is back, after backing off', async () => {
    const clock = manualClock();
    t = await createTestApp({ MAIL_RETRY_BASE_SECONDS: '30', MAIL_MAX_ATTEMPTS: '5' }, { smtp: false, now: clock.now });
    const email = uniqueEmail('patient');
    // The request answers at once: no SMTP exchange happens on its path or inside its transaction.
    expect((await request(t.app).post('/api/auth/signup').send({ email })).status).toBe(202);
    await t.composition.services.accounts.settle();

    const first = await rowFor(t, email);
    expect(first).toMatchObject({ status: 'queued', attempts: 1, kind: 'signup_link', team_id: null });
    expect(first.last_error).toMatch(/ECONNREFUSED/);
    // Next try 30 s after the failure (MAIL_RETRY_BASE_SECONDS).
    expect(first.next_attempt_at.getTime() - clock.now().getTime()).toBe(30_000);

    await t.startSmtp();
    await t.composition.mail.drain();
    expect((await rowFor(t, email)).attempts).toBe(1);
    expect(await mailFor(t.db.knex, email)).toEqual([]);

    clock.advance(30_000);
    await t.composition.mail.drain();
    const delivered = await waitForMail(t.db.knex, email, { subject: /finish creating/i });
    expect(linkToken(delivered, 'sign-up').token).toMatch(/^[A-Za-z0-9_-]{43}$/);
    const sent = await rowFor(t, email);
    expect(sent).toMatchObject({ status: 'sent', attempts: 2, last_error: null });
    expect(sent.sent_at).toEqual(clock.now());
    // Account mail loses its body once delivered: the queue keeps no usable one-time link.
    expect(sent.text).toBeNull();
    expect(sent.html).toBeNull();
  });

  it('doubles the wait after each failure and gives up after MAIL_MAX_ATTEMPTS, keeping the reason', async () => {
    const clock = manualClock();
    t = await createTestApp({ MAIL_RETRY_BASE_SECONDS: '10', MAIL_MAX_ATTEMPTS: '4' }, { smtp: false, now: clock.now });
    const email = uniqueEmail('unlucky');
    await request(t.app).post('/api/auth/signup').send({ email });
    await t.composition.services.accounts.settle();
    const waits: number[] = [];
    for (let i = 0; i < 3; i += 1) {
      const row = await rowFor(t, email);
      waits.push(row.next_attempt_at.getTime() - clock.now().getTime());
      clock.advance(waits[i]);
      await t.composition.mail.drain();
    }
    expect(waits).toEqual([10_000, 20_000, 40_000]);
    const failed = await rowFor(t, email);
    expect(failed).toMatchObject({ status: 'failed', attempts: 4, text: null });
    expect(failed.last_error).toMatch(/ECONNREFUSED/);

    // Given up means given up: SMTP back and any amount of time later, nothing is sent.
    await t.startSmtp();
    clock.advance(24 * 60 * 60_000);
    await t.composition.mail.drain();
    expect((await rowFor(t, email)).attempts).toBe(4);
    expect(await mailFor(t.db.knex, email)).toEqual([]);
  });

  it('gives up at once when the SMTP server refuses the recipient for good (5xx, RFC 5321 §4.2.1)', async () => {
    const refusing = new SMTPServer({
      authOptional: true,
      disabledCommands: ['STARTTLS'],
      logger: false,
      onRcptTo(_address, _session, callback) {
        callback(Object.assign(new Error('No such mailbox here'), { responseCode: 550 }));
      },
    });
    await new Promise<void>((resolve) => refusing.listen(0, '127.0.0.1', resolve));
    try {
      const port = (refusing.server.address() as AddressInfo).port;
      t = await createTestApp({ SMTP_PORT: String(port), FAKE_SMTP: 'true' }, { smtp: false });
      const email = uniqueEmail('nobody-home');
      await request(t.app).post('/api/auth/signup').send({ email });
      await t.composition.services.accounts.settle();
      const row = await rowFor(t, email);
      expect(row).toMatchObject({ status: 'failed', attempts: 1 });
      expect(row.last_error).toMatch(/^550 /);
    } finally {
      await new Promise<void>((resolve) => refusing.close(() => resolve()));
    }
  });

  it('sends nothing, and keeps no row, when the transaction that queued the mail rolls back', async () => {
    t = await createTestApp();
    const email = uniqueEmail('never');
    const composition = t.composition;
    await expect(
      composition.db.transaction(async (tx) => {
        await composition.mail.enqueue(tx, { teamId: null, kind: 'password_reset', to: email, content: { subject: 'Never sent', text: 'x', html: '<p>x</p>' } });
        throw new Error('the business change failed after queueing its mail');
      }),
    ).rejects.toThrow(/business change failed/);
    await composition.mail.drain();
    expect(await rowFor(t, email)).toBeUndefined();
    expect(await mailFor(t.db.knex, email)).toEqual([]);
  });

  it('wakes on commit: a committed message is delivered without waiting for the timer', async () => {
    t = await createTestApp();
    await t.composition.mail.stop();
    // A sender of its own whose timer would first look after an hour: only the wake-up on commit can deliver.
    const sender = createMailSender({
      db: t.composition.db,
      transport: createMailTransport(t.composition.config),
      logger: t.composition.logger,
      now: () => new Date(),
      ...t.composition.config.mailQueue,
      pollMs: 60 * 60_000,
    });
    sender.start();
    try {
      const email = uniqueEmail('prompt');
      await t.composition.db.transaction((tx) =>
        sender.enqueue(tx, { teamId: null, kind: 'password_reset', to: email, content: { subject: 'Prompt', text: 'hello', html: '<p>hello</p>' } }),
      );
      await waitForMail(t.db.knex, email, { subject: /prompt/i });
    } finally {
      await sender.stop();
    }
  });

  it('leaves messages queued while stopped and delivers them on the next start', async () => {
    t = await createTestApp();
    const email = uniqueEmail('later');
    const composition = t.composition;
    await composition.mail.stop();
    await composition.db.transaction((tx) =>
      composition.mail.enqueue(tx, { teamId: null, kind: 'password_reset', to: email, content: { subject: 'Later', text: 'hello', html: '<p>hello</p>' } }),
    );
    expect(await rowFor(t, email)).toMatchObject({ status: 'queued', attempts: 0 });
    composition.mail.start();
    await waitForMail(t.db.knex, email, { subject: /later/i });
  });
});
