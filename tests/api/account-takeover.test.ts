// The account-takeover path of issue 9, walked as an attacker would: sign up, invite the victim's address,
// read the link in one's own Outbox, accept it. None of it may sign the attacker in as the victim, and no mail
// about the victim's account (reset, sign-up) may show in the attacker's Outbox.
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { outboxResponse } from '../../server/contracts';
import { bearer, createTestApp, signUp, uniqueEmail, type Session, type TestApp } from '../helpers/api';
import { linkToken } from '../helpers/mailbox';

let t: TestApp;
let attacker: Session;
let victim: Session;

beforeAll(async () => {
  t = await createTestApp();
  victim = await signUp(t.app, { teamName: 'Victim Lab', email: uniqueEmail('victim'), name: 'Vera Victim' });
  attacker = await signUp(t.app, { teamName: 'Attacker Lab', email: uniqueEmail('attacker') });
});
afterAll(async () => {
  await t?.close();
});

const outboxOf = async (s: Session) => outboxResponse.parse((await request(t.app).get(`/api/teams/${s.teamId}/outbox`).set(bearer(s))).body).messages;
const membersOf = (teamId: number) => t.db.knex('memberships').where({ team_id: teamId }).orderBy('user_id').select('user_id', 'role');
const liveSessionsOf = (userId: number) => t.db.knex('sessions').where({ user_id: userId }).whereNull('revoked_at').count({ n: '*' }).first();

describe('inviting an existing account and accepting by the link alone', () => {
  it('issues no session for the victim and changes nothing, whoever holds the link', async () => {
    const invited = await request(t.app).post(`/api/teams/${attacker.teamId}/invitations`).set(bearer(attacker)).send({ email: victim.user.email, role: 'admin' });
    expect(invited.status).toBe(201);
    await t.composition.services.accounts.settle();

    // The inviting team's admin can read its own invitation, link included (acceptable: it signs nobody in).
    const mine = (await outboxOf(attacker)).find((m) => m.to === victim.user.email && m.kind === 'invitation');
    expect(mine?.status).toBe('sent');
    const { token } = linkToken(mine!, 'invite');

    const membersBefore = await membersOf(attacker.teamId);
    const sessionsBefore = await liveSessionsOf(victim.user.id);
    for (const [caller, headers] of [
      ['nobody', {}],
      ['the attacker', bearer(attacker)],
    ] as const) {
      const res = await request(t.app).post(`/api/invitations/${token}/accept`).set(headers).send({});
      expect(res.status, caller).toBe(caller === 'nobody' ? 401 : 403);
      expect(res.body.error.message, caller).toContain(victim.user.email);
      expect(res.body.token, caller).toBeUndefined();
      expect(JSON.stringify(res.body), caller).not.toMatch(/eyJ/);
      expect(res.headers['set-cookie'], caller).toBeUndefined();
    }
    // A name and password in the body do not help either: the address has an account.
    const withPassword = await request(t.app).post(`/api/invitations/${token}/accept`).send({ name: 'Not Vera', password: 'attacker-chosen-1' });
    expect(withPassword.status).toBe(401);
    expect(withPassword.headers['set-cookie']).toBeUndefined();

    expect(await membersOf(attacker.teamId)).toEqual(membersBefore);
    expect(await liveSessionsOf(victim.user.id)).toEqual(sessionsBefore);
    expect((await t.db.knex('invitations').where({ team_id: attacker.teamId, email: victim.user.email }).first()).accepted_at).toBeNull();

    // The victim, signed in as themselves, may still accept: that adds the team and issues no new token.
    const own = await request(t.app).post(`/api/invitations/${token}/accept`).set(bearer(victim)).send({});
    expect(own.status).toBe(200);
    expect(own.body.token).toBeUndefined();
    expect(own.body.team).toEqual({ id: attacker.teamId, name: 'Attacker Lab', role: 'admin' });
    expect(own.headers['set-cookie']).toBeUndefined();
    expect(await liveSessionsOf(victim.user.id)).toEqual(sessionsBefore);
  });
});

describe("account mail for someone the attacker's team once invited", () => {
  it("never shows in the attacker's Outbox: no reset link, no sign-up note", async () => {
    const target = await signUp(t.app, { teamName: 'Target Lab', email: uniqueEmail('target') });
    expect((await request(t.app).post(`/api/teams/${attacker.teamId}/invitations`).set(bearer(attacker)).send({ email: target.user.email, role: 'viewer' })).status).toBe(201);
    expect((await request(t.app).post('/api/auth/password-reset').send({ email: target.user.email })).status).toBe(202);
    expect((await request(t.app).post('/api/auth/signup').send({ email: target.user.email })).status).toBe(202);
    await t.composition.services.accounts.settle();

    // The mail did go out, to the target (signup_link: the target's own sign-up, before all this).
    const sent = await t.db.knex('mail_queue').where({ recipient: target.user.email }).select('kind', 'team_id', 'status');
    expect(sent.map((m: { kind: string }) => m.kind).sort()).toEqual(['invitation', 'password_reset', 'signup_existing', 'signup_link']);
    expect(sent.every((m: { status: string }) => m.status === 'sent')).toBe(true);

    const outbox = await outboxOf(attacker);
    const aboutTarget = outbox.filter((m) => m.to === target.user.email);
    expect(aboutTarget.map((m) => m.kind)).toEqual(['invitation']);
    const all = JSON.stringify(outbox);
    expect(all).not.toContain('/reset-password/');
    expect(all).not.toContain('/sign-up/');
    expect(all).not.toMatch(/reset your/i);
  });
});
