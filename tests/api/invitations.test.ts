import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { acceptInvitationResponse, invitationPreview, invitationsResponse, outboxResponse } from '../../server/contracts';
import { bearer, createTestApp, signUp, testPassword, uniqueEmail, type Session, type TestApp } from '../helpers/api';
import { manualClock } from '../helpers/clock';
import { linkToken, waitForMail } from '../helpers/mailbox';

let t: TestApp;
let admin: Session;

beforeAll(async () => {
  t = await createTestApp();
  admin = await signUp(t.app, { teamName: 'Reef Thumbnails', name: 'Ines Calder' });
});
afterAll(async () => {
  await t?.close();
});

async function invite(email: string, role: 'admin' | 'engineer' | 'viewer', by: Session = admin) {
  const res = await request(t.app).post(`/api/teams/${by.teamId}/invitations`).set(bearer(by)).send({ email, role });
  expect(res.status).toBe(201);
  return res.body.invitation as { id: number; email: string; role: string };
}

describe('invitations', () => {
  it('e-mails a one-time link over SMTP that makes a new account with the invited role, once', async () => {
    const email = uniqueEmail('diver');
    const inv = await invite(email, 'engineer');
    expect(inv).toMatchObject({ email, role: 'engineer', invitedBy: 'Ines Calder', acceptedAt: null });

    const mail = await waitForMail(t.db.knex, email);
    expect(mail.subject).toContain('Reef Thumbnails');
    expect(mail.from).toBe('no-reply@cellwright.test');
    expect(mail.to).toEqual([email]);
    expect(mail.html).toContain('/invite/');
    const { url, token } = linkToken(mail, 'invite');
    expect(url).toBe(`${t.publicUrl}/invite/${token}`);
    // The token is 32 random bytes in base64url (RFC 4648 §5): 43 characters, no padding.
    expect(token).toMatch(/^[A-Za-z0-9_-]{43}$/);
    const stored = await t.db.knex('invitations').where({ id: inv.id }).first();
    expect(stored.token_hash).toMatch(/^[0-9a-f]{64}$/);
    expect(JSON.stringify(stored)).not.toContain(token);

    const preview = await request(t.app).get(`/api/invitations/${token}`);
    expect(preview.status).toBe(200);
    expect(invitationPreview.parse(preview.body)).toMatchObject({ email, teamName: 'Reef Thumbnails', role: 'engineer', existingAccount: false });

    const missing = await request(t.app).post(`/api/invitations/${token}/accept`).send({});
    expect(missing.status).toBe(400);
    expect(missing.body.error.code).toBe('validation_failed');

    const accepted = await request(t.app).post(`/api/invitations/${token}/accept`).send({ name: 'Pia Lund', password: testPassword });
    expect(accepted.status).toBe(200);
    expect(accepted.body.user).toMatchObject({ email, name: 'Pia Lund' });
    const me = await request(t.app).get('/api/me').set(bearer(accepted.body));
    expect(me.body.teams).toEqual([{ id: admin.teamId, name: 'Reef Thumbnails', role: 'engineer' }]);

    const again = await request(t.app).post(`/api/invitations/${token}/accept`).send({ name: 'Pia Lund', password: testPassword });
    expect(again.status).toBe(410);
    expect(again.body.error.code).toBe('token_used');
    expect((await request(t.app).get(`/api/invitations/${token}`)).status).toBe(410);

    const login = await request(t.app).post('/api/auth/login').send({ email, password: testPassword });
    expect(login.status).toBe(200);
  });

  it('lets an existing account join by the link while signed in as itself, keeping its password and session', async () => {
    const other = await signUp(t.app, { teamName: 'Elsewhere' });
    await invite(other.user.email, 'viewer');
    const { token } = linkToken(await waitForMail(t.db.knex, other.user.email, { subject: /invited/i }), 'invite');
    const preview = await request(t.app).get(`/api/invitations/${token}`);
    expect(preview.body.existingAccount).toBe(true);
    const anonymous = await request(t.app).post(`/api/invitations/${token}/accept`).send({});
    expect(anonymous.status).toBe(401);
    expect(anonymous.body.error.message).toBe(`Sign in as ${other.user.email} to accept this invitation`);
    const accepted = await request(t.app).post(`/api/invitations/${token}/accept`).set('Cookie', other.cookie).send({});
    expect(accepted.status).toBe(200);
    expect(acceptInvitationResponse.parse(accepted.body)).toEqual({ user: expect.objectContaining({ id: other.user.id }), team: { id: admin.teamId, name: 'Reef Thumbnails', role: 'viewer' } });
    const me = await request(t.app).get('/api/me').set(bearer(other));
    expect(me.body.teams.map((x: { role: string }) => x.role).sort()).toEqual(['admin', 'viewer']);
    expect((await request(t.app).post('/api/auth/login').send({ email: other.user.email, password: testPassword })).status).toBe(200);
  });

  it('refuses a revoked invitation with 410 token_revoked and hides it from the list', async () => {
    const email = uniqueEmail('revoked');
    const inv = await invite(email, 'viewer');
    const { token } = linkToken(await waitForMail(t.db.knex, email), 'invite');
    const del = await request(t.app).delete(`/api/teams/${admin.teamId}/invitations/${inv.id}`).set(bearer(admin));
    expect(del.status).toBe(204);
    const res = await request(t.app).post(`/api/invitations/${token}/accept`).send({ name: 'R', password: testPassword });
    expect(res.status).toBe(410);
    expect(res.body.error.code).toBe('token_revoked');
    expect(await t.db.knex('users').where({ email }).first()).toBeUndefined();
    const list = invitationsResponse.parse((await request(t.app).get(`/api/teams/${admin.teamId}/invitations`).set(bearer(admin))).body);
    expect(list.invitations.map((i) => i.id)).not.toContain(inv.id);
    expect((await request(t.app).delete(`/api/teams/${admin.teamId}/invitations/${inv.id}`).set(bearer(admin))).status).toBe(404);
  });

  it('refuses an expired invitation with 410 token_expired', async () => {
    const email = uniqueEmail('late');
    const inv = await invite(email, 'viewer');
    const { token } = linkToken(await waitForMail(t.db.knex, email), 'invite');
    await t.db.knex('invitations').where({ id: inv.id }).update({ expires_at: new Date(Date.now() - 1000) });
    const res = await request(t.app).post(`/api/invitations/${token}/accept`).send({ name: 'L', password: testPassword });
    expect(res.status).toBe(410);
    expect(res.body.error.code).toBe('token_expired');
  });

  it('sets invitations to expire seven days after they are made', async () => {
    const inv = await invite(uniqueEmail('week'), 'viewer');
    const row = await t.db.knex('invitations').where({ id: inv.id }).first();
    const days = (row.expires_at.getTime() - row.created_at.getTime()) / 86_400_000;
    expect(days).toBeCloseTo(7, 2);
  });

  it('answers an unknown token with 404', async () => {
    const res = await request(t.app).get(`/api/invitations/${'A'.repeat(43)}`);
    expect(res.status).toBe(404);
    expect(res.body.error.code).toBe('not_found');
  });

  it('keeps only the newest link alive when someone is invited twice', async () => {
    const email = uniqueEmail('twice');
    await invite(email, 'viewer');
    const first = await waitForMail(t.db.knex, email);
    await invite(email, 'engineer');
    const second = await waitForMail(t.db.knex, email, { afterId: first.id });
    const old = await request(t.app).get(`/api/invitations/${linkToken(first, 'invite').token}`);
    expect(old.status).toBe(410);
    const fresh = await request(t.app).get(`/api/invitations/${linkToken(second, 'invite').token}`);
    expect(fresh.body.role).toBe('engineer');
  });

  it('refuses to invite someone who is already a member with 409', async () => {
    const res = await request(t.app)
      .post(`/api/teams/${admin.teamId}/invitations`)
      .set(bearer(admin))
      .send({ email: admin.user.email, role: 'viewer' });
    expect(res.status).toBe(409);
  });

  it('keeps the invitation and its queued mail while SMTP is down, and delivers the mail once SMTP is back', async () => {
    const clock = manualClock();
    const broken = await createTestApp({ MAIL_RETRY_BASE_SECONDS: '60' }, { smtp: false, now: clock.now });
    try {
      // An account made directly: signing up needs mail, which is what is down here.
      const hash = await broken.composition.services.accounts.hashPassword(testPassword);
      const owner = await broken.composition.db.transaction(async (tx) => {
        const user = await tx.users.create({ email: uniqueEmail('owner'), name: 'Owner', passwordHash: hash });
        const team = await tx.teams.create('Offline Lab');
        await tx.memberships.create({ teamId: team.id, userId: user.id, role: 'admin' });
        return { user, team };
      });
      const token = (await request(broken.app).post('/api/auth/login').send({ email: owner.user.email, password: testPassword })).body.token as string;
      const email = uniqueEmail('unsent');
      const res = await request(broken.app).post(`/api/teams/${owner.team.id}/invitations`).set(bearer({ token })).send({ email, role: 'viewer' });
      expect(res.status).toBe(201);
      await broken.composition.mail.drain();
      const queued = await broken.db.knex('mail_queue').where({ recipient: email }).first();
      expect(queued).toMatchObject({ status: 'queued', attempts: 1, team_id: owner.team.id, kind: 'invitation' });
      expect(queued.last_error).toMatch(/ECONNREFUSED/);
      expect(await broken.db.knex('invitations').where({ email }).first()).toBeDefined();

      await broken.startSmtp();
      clock.advance(60_000);
      await broken.composition.mail.drain();
      const mail = await waitForMail(broken.db.knex, email, { subject: /invited/i });
      expect(linkToken(mail, 'invite').token).toMatch(/^[A-Za-z0-9_-]{43}$/);
      expect(await broken.db.knex('mail_queue').where({ recipient: email }).first()).toMatchObject({ status: 'sent', attempts: 2 });
    } finally {
      await broken.close();
    }
  });

  it("lists in the outbox the team's own invitations with their delivery status, newest first, for admins", async () => {
    const email = uniqueEmail('outbox');
    await invite(email, 'viewer');
    await t.composition.services.accounts.settle();
    const res = await request(t.app).get(`/api/teams/${admin.teamId}/outbox`).set(bearer(admin));
    const { messages } = outboxResponse.parse(res.body);
    expect(messages[0]).toMatchObject({ to: email, kind: 'invitation', status: 'sent', attempts: 1, lastError: null });
    expect(messages[0].text).toContain('/invite/');
    const ids = messages.map((m) => m.id);
    expect(ids).toEqual([...ids].sort((x, y) => y - x));
    // Another team's invitations stay out of this team's outbox, and the other way round.
    const outsider = await signUp(t.app, { teamName: 'Outsiders' });
    const theirs = uniqueEmail('theirs');
    await invite(theirs, 'viewer', outsider);
    await t.composition.services.accounts.settle();
    const ours = outboxResponse.parse((await request(t.app).get(`/api/teams/${admin.teamId}/outbox`).set(bearer(admin))).body).messages;
    expect(ours.map((m) => m.to)).not.toContain(theirs);
    const outsiders = outboxResponse.parse((await request(t.app).get(`/api/teams/${outsider.teamId}/outbox`).set(bearer(outsider))).body).messages;
    expect(outsiders.map((m) => m.to)).toEqual([theirs]);
  });
});

describe('the last admin', () => {
  it('cannot be demoted or removed (409), but can once another admin exists', async () => {
    const solo = await signUp(t.app, { teamName: 'Solo' });
    const demote = await request(t.app)
      .patch(`/api/teams/${solo.teamId}/members/${solo.user.id}`)
      .set(bearer(solo))
      .send({ role: 'engineer' });
    expect(demote.status).toBe(409);
    expect(demote.body.error.details).toEqual({ reason: 'last_admin' });
    const remove = await request(t.app).delete(`/api/teams/${solo.teamId}/members/${solo.user.id}`).set(bearer(solo));
    expect(remove.status).toBe(409);

    const email = uniqueEmail('second-admin');
    await invite(email, 'admin', solo);
    const { token } = linkToken(await waitForMail(t.db.knex, email), 'invite');
    await request(t.app).post(`/api/invitations/${token}/accept`).send({ name: 'Second', password: testPassword });
    const demoteNow = await request(t.app)
      .patch(`/api/teams/${solo.teamId}/members/${solo.user.id}`)
      .set(bearer(solo))
      .send({ role: 'engineer' });
    expect(demoteNow.status).toBe(200);
    expect(demoteNow.body.member).toMatchObject({ userId: solo.user.id, role: 'engineer' });
    const audit = await t.db.knex('audit_log').where({ team_id: solo.teamId, action: 'member.role_changed' }).first();
    // Depending on the server's column metadata the driver hands back JSON as text or already parsed.
    const details = typeof audit.details === 'string' ? JSON.parse(audit.details) : audit.details;
    expect(details).toEqual({ from: 'admin', to: 'engineer' });
  });

  it('survives two admins demoting each other at the same moment', async () => {
    const first = await signUp(t.app, { teamName: 'Race' });
    const email = uniqueEmail('racer');
    await invite(email, 'admin', first);
    const { token } = linkToken(await waitForMail(t.db.knex, email), 'invite');
    const second = (await request(t.app).post(`/api/invitations/${token}/accept`).send({ name: 'Racer', password: testPassword })).body;
    const [r1, r2] = await Promise.all([
      request(t.app).patch(`/api/teams/${first.teamId}/members/${second.user.id}`).set(bearer(first)).send({ role: 'viewer' }),
      request(t.app).patch(`/api/teams/${first.teamId}/members/${first.user.id}`).set(bearer(second)).send({ role: 'viewer' }),
    ]);
    // One demotion wins. The other is refused either by the last-admin rule (409, when both passed the role check
    // first) or by the role check itself (403, when the winner's demotion committed before it ran).
    const [won, lost] = [r1.status, r2.status].sort();
    expect(won).toBe(200);
    expect([403, 409]).toContain(lost);
    const admins = await t.db.knex('memberships').where({ team_id: first.teamId, role: 'admin' });
    expect(admins).toHaveLength(1);
  });
});

describe('accepting one invitation twice at once', () => {
  it('lets exactly one request through', async () => {
    const email = uniqueEmail('double');
    await invite(email, 'viewer');
    const { token } = linkToken(await waitForMail(t.db.knex, email), 'invite');
    const body = { name: 'Double', password: testPassword };
    const [r1, r2] = await Promise.all([
      request(t.app).post(`/api/invitations/${token}/accept`).send(body),
      request(t.app).post(`/api/invitations/${token}/accept`).send(body),
    ]);
    expect([r1.status, r2.status].sort()).toEqual([200, 410]);
    expect(await t.db.knex('users').where({ email })).toHaveLength(1);
  });
});
