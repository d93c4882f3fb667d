import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addMember, bearer, createTestApp, teamWithRoles, uniqueEmail, type Session, type TestApp } from '../helpers/api';

let t: TestApp;
let a: Awaited<ReturnType<typeof teamWithRoles>>;
let b: Awaited<ReturnType<typeof teamWithRoles>>;

beforeAll(async () => {
  t = await createTestApp();
  a = await teamWithRoles(t, 'Team A');
  b = await teamWithRoles(t, 'Team B');
});
afterAll(async () => {
  await t?.close();
});

type RoleName = 'admin' | 'engineer' | 'viewer';

interface Case {
  name: string;
  method: 'get' | 'post' | 'patch' | 'delete';
  /** Makes a fresh target in team A and returns the path, body, and a probe of whether it changed. */
  prepare(): Promise<{ path: string; body?: object; unchanged(): Promise<boolean> }>;
  expected: Record<RoleName, number>;
}

const memberRole = async (teamId: number, userId: number) =>
  (await t.db.knex('memberships').where({ team_id: teamId, user_id: userId }).first())?.role as string | undefined;

const newInvitation = async () => {
  const email = uniqueEmail('pending');
  const res = await request(t.app).post(`/api/teams/${a.teamId}/invitations`).set(bearer(a.admin)).send({ email, role: 'viewer' });
  return res.body.invitation.id as number;
};

const cases: Case[] = [
  {
    name: 'change a member role',
    method: 'patch',
    async prepare() {
      const m = await addMember(t, a.admin, 'viewer');
      return {
        path: `/api/teams/${a.teamId}/members/${m.user.id}`,
        body: { role: 'engineer' },
        unchanged: async () => (await memberRole(a.teamId, m.user.id)) === 'viewer',
      };
    },
    expected: { admin: 200, engineer: 403, viewer: 403 },
  },
  {
    name: 'remove a member',
    method: 'delete',
    async prepare() {
      const m = await addMember(t, a.admin, 'viewer');
      return {
        path: `/api/teams/${a.teamId}/members/${m.user.id}`,
        unchanged: async () => (await memberRole(a.teamId, m.user.id)) === 'viewer',
      };
    },
    expected: { admin: 204, engineer: 403, viewer: 403 },
  },
  {
    name: 'invite someone',
    method: 'post',
    async prepare() {
      const email = uniqueEmail('invitee');
      return {
        path: `/api/teams/${a.teamId}/invitations`,
        body: { email, role: 'engineer' },
        unchanged: async () => (await t.db.knex('invitations').where({ email }).first()) === undefined,
      };
    },
    expected: { admin: 201, engineer: 403, viewer: 403 },
  },
  {
    name: 'revoke an invitation',
    method: 'delete',
    async prepare() {
      const id = await newInvitation();
      return {
        path: `/api/teams/${a.teamId}/invitations/${id}`,
        unchanged: async () => (await t.db.knex('invitations').where({ id }).first()).revoked_at === null,
      };
    },
    expected: { admin: 204, engineer: 403, viewer: 403 },
  },
  {
    name: 'list invitations',
    method: 'get',
    async prepare() {
      return { path: `/api/teams/${a.teamId}/invitations`, unchanged: async () => true };
    },
    expected: { admin: 200, engineer: 403, viewer: 403 },
  },
  {
    name: 'read the outbox',
    method: 'get',
    async prepare() {
      return { path: `/api/teams/${a.teamId}/outbox`, unchanged: async () => true };
    },
    expected: { admin: 200, engineer: 403, viewer: 403 },
  },
  {
    name: 'list members',
    method: 'get',
    async prepare() {
      return { path: `/api/teams/${a.teamId}/members`, unchanged: async () => true };
    },
    expected: { admin: 200, engineer: 200, viewer: 200 },
  },
];

describe('team routes by role', () => {
  for (const c of cases) {
    for (const role of ['admin', 'engineer', 'viewer'] as const) {
      const status = c.expected[role];
      it(`answers ${c.method.toUpperCase()} "${c.name}" by ${role === 'admin' ? 'an' : 'a'} ${role} with ${status}`, async () => {
        const session: Session = a[role];
        const target = await c.prepare();
        const req = request(t.app)[c.method](target.path).set(bearer(session));
        const res = await (target.body ? req.send(target.body) : req);
        expect(res.status).toBe(status);
        if (status === 403) {
          expect(res.body.error.code).toBe('forbidden');
          expect(await target.unchanged()).toBe(true);
        } else if (c.method !== 'get') {
          expect(await target.unchanged()).toBe(false);
        }
      });
    }
  }
});

describe("another team's resources", () => {
  const foreign = () => [
    ['get', `/api/teams/${b.teamId}/members`, undefined],
    ['patch', `/api/teams/${b.teamId}/members/${b.viewer.user.id}`, { role: 'admin' }],
    ['delete', `/api/teams/${b.teamId}/members/${b.viewer.user.id}`, undefined],
    ['get', `/api/teams/${b.teamId}/invitations`, undefined],
    ['post', `/api/teams/${b.teamId}/invitations`, { email: uniqueEmail('x'), role: 'admin' }],
    ['delete', `/api/teams/${b.teamId}/invitations/1`, undefined],
    ['get', `/api/teams/${b.teamId}/outbox`, undefined],
  ] as const;

  for (const role of ['admin', 'engineer', 'viewer'] as const) {
    it(`look like they do not exist to ${role === 'admin' ? 'an' : 'a'} ${role} of team A (404, never 403)`, async () => {
      for (const [method, path, body] of foreign()) {
        const req = request(t.app)[method](path).set(bearer(a[role]));
        const res = await (body ? req.send(body) : req);
        expect({ method, path, status: res.status }).toEqual({ method, path, status: 404 });
        expect(res.body.error.code).toBe('not_found');
      }
      expect(await memberRole(b.teamId, b.viewer.user.id)).toBe('viewer');
    });
  }

  it('answers a team id that is not a number, or out of range, with 404', async () => {
    for (const id of ['abc', '0', '-1', '99999999999']) {
      const res = await request(t.app).get(`/api/teams/${id}/members`).set(bearer(a.admin));
      expect(res.status).toBe(404);
    }
  });

  it("refuses to change a member who belongs to another team, even for the caller's own team id", async () => {
    const res = await request(t.app)
      .patch(`/api/teams/${a.teamId}/members/${b.viewer.user.id}`)
      .set(bearer(a.admin))
      .send({ role: 'engineer' });
    expect(res.status).toBe(404);
    expect(await memberRole(b.teamId, b.viewer.user.id)).toBe('viewer');
  });

  it('needs a session before anything else (401)', async () => {
    const res = await request(t.app).get(`/api/teams/${a.teamId}/members`);
    expect(res.status).toBe(401);
  });
});
