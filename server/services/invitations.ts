import type { AcceptInvitationBody, AcceptInvitationResponse, Invitation, InvitationPreview, Role, User } from '../contracts';
import type { Database } from '../db';
import { conflict, forbidden, notFound, tokenExpired, tokenRevoked, tokenUsed, unauthenticated, validationFailed } from '../errors';
import { invitationMail } from '../mail/templates';
import { publicUser, type AccountsService, type Caller } from './accounts';
import { recordAudit } from './audit';
import type { MailOutbox } from './mail-queue';
import { hashToken, newOneTimeToken } from './one-time-tokens';

export const invitationTtlMs = 7 * 24 * 60 * 60 * 1000;

export interface InvitationsDeps {
  db: Database;
  mail: MailOutbox;
  accounts: Pick<AccountsService, 'hashPassword' | 'startSession'>;
  publicUrl: string;
  now?: () => Date;
}

export function createInvitationsService(deps: InvitationsDeps) {
  const now = deps.now ?? (() => new Date());

  /** Rejects a link that can no longer be used, naming why. */
  function ensureUsable(inv: { acceptedAt: string | null; revokedAt: string | null; expiresAt: string }) {
    if (inv.acceptedAt) throw tokenUsed('This invitation has already been accepted');
    if (inv.revokedAt) throw tokenRevoked('This invitation was withdrawn by the team');
    if (new Date(inv.expiresAt).getTime() <= now().getTime()) {
      throw tokenExpired('This invitation has expired; ask the team for a new one');
    }
  }

  /**
   * An address with an account joins only by that account's own session: the link alone proves nothing about
   * who holds it (a team's admins can read it in their Outbox), so it never signs anyone in to an existing account.
   */
  function ensureCallerIs(existing: { id: number; email: string }, caller: Caller | null): void {
    if (!caller) throw unauthenticated(`Sign in as ${existing.email} to accept this invitation`);
    if (caller.user.id !== existing.id) {
      throw forbidden(`This invitation is for ${existing.email}; you are signed in as ${caller.user.email}. Sign in as the invited address to accept it`);
    }
  }

  return {
    async list(teamId: number): Promise<Invitation[]> {
      return deps.db.repos.invitations.listForTeam(teamId);
    },

    /** Creates the invitation and queues its mail in the same transaction; the mail leaves after the commit. */
    async create(teamId: number, actor: User, input: { email: string; role: Role }): Promise<Invitation> {
      const { token, hash } = newOneTimeToken();
      const expiresAt = new Date(now().getTime() + invitationTtlMs);
      const id = await deps.db.transaction(async (tx) => {
        const team = await tx.teams.findById(teamId);
        if (!team) throw notFound('Team');
        const existing = await tx.users.findByEmail(input.email);
        if (existing && (await tx.memberships.find(teamId, existing.id))) {
          throw conflict('This person is already a member of the team', { field: 'email' });
        }
        // A fresh invitation replaces any earlier one to the same address: only the newest link works.
        await tx.invitations.revokePending(teamId, input.email, now());
        const inv = await tx.invitations.create({
          teamId,
          email: input.email,
          role: input.role,
          tokenHash: hash,
          invitedBy: actor.id,
          expiresAt,
        });
        await recordAudit(tx, {
          teamId,
          actorUserId: actor.id,
          action: 'invitation.created',
          targetType: 'invitation',
          targetId: inv.id,
          details: { email: inv.email, role: inv.role },
        });
        await deps.mail.enqueue(tx, {
          teamId,
          kind: 'invitation',
          to: inv.email,
          content: invitationMail({ teamName: team.name, inviterName: actor.name, role: inv.role, link: `${deps.publicUrl}/invite/${token}`, expiresAt }),
        });
        return inv.id;
      });
      const created = (await deps.db.repos.invitations.listForTeam(teamId)).find((i) => i.id === id);
      if (!created) throw notFound('Invitation');
      return created;
    },

    async revoke(teamId: number, actorUserId: number, invitationId: number): Promise<void> {
      await deps.db.transaction(async (tx) => {
        const inv = await tx.invitations.findInTeam(teamId, invitationId, { forUpdate: true });
        if (!inv || inv.revokedAt) throw notFound('Invitation');
        if (inv.acceptedAt) throw conflict('This invitation has already been accepted; remove the member instead');
        await tx.invitations.revoke(inv.id, now());
        await recordAudit(tx, {
          teamId,
          actorUserId,
          action: 'invitation.revoked',
          targetType: 'invitation',
          targetId: inv.id,
          details: { email: inv.email },
        });
      });
    },

    async preview(token: string): Promise<InvitationPreview> {
      const inv = await deps.db.repos.invitations.findByTokenHash(hashToken(token));
      if (!inv) throw notFound('Invitation');
      ensureUsable(inv);
      const team = await deps.db.repos.teams.findById(inv.teamId);
      if (!team) throw notFound('Invitation');
      const existing = await deps.db.repos.users.findByEmail(inv.email);
      return { email: inv.email, teamName: team.name, role: inv.role, existingAccount: existing !== null, expiresAt: inv.expiresAt };
    },

    /**
     * An existing account joins by its own session (see ensureCallerIs); a new address gets an account made from
     * name + password, and only then a session. The row lock makes the link single-use.
     */
    async accept(token: string, input: AcceptInvitationBody, caller: Caller | null): Promise<AcceptInvitationResponse> {
      const tokenHash = hashToken(token);
      const peek = await deps.db.repos.invitations.findByTokenHash(tokenHash);
      if (!peek) throw notFound('Invitation');
      ensureUsable(peek);
      const existingBefore = await deps.db.repos.users.findByEmail(peek.email);
      let passwordHash: string | undefined;
      if (existingBefore) ensureCallerIs(existingBefore, caller);
      else {
        const missing = [
          ...(input.name ? [] : [{ path: 'name', message: 'Your name is needed to create the account' }]),
          ...(input.password ? [] : [{ path: 'password', message: 'Choose a password for the new account' }]),
        ];
        if (missing.length > 0) throw validationFailed('A new account needs a name and a password', missing);
        // Hash outside the transaction: bcrypt is slow and row locks should be short.
        passwordHash = await deps.accounts.hashPassword(input.password!);
      }
      return deps.db.transaction(async (tx) => {
        const inv = await tx.invitations.findByTokenHash(tokenHash, { forUpdate: true });
        if (!inv) throw notFound('Invitation');
        ensureUsable(inv);
        const team = await tx.teams.findById(inv.teamId);
        if (!team) throw notFound('Invitation');
        let account = await tx.users.findByEmail(inv.email);
        let token: string | undefined;
        if (account) {
          ensureCallerIs(account, caller);
        } else {
          if (!passwordHash) throw conflict('The account changed while accepting; try again');
          account = await tx.users.create({ email: inv.email, name: input.name!, passwordHash });
          await recordAudit(tx, { teamId: null, actorUserId: account.id, action: 'user.signed_up', targetType: 'user', targetId: account.id });
          token = await deps.accounts.startSession(tx, account);
        }
        const membership = await tx.memberships.find(inv.teamId, account.id);
        if (!membership) await tx.memberships.create({ teamId: inv.teamId, userId: account.id, role: inv.role });
        await tx.invitations.markAccepted(inv.id, account.id, now());
        const role = membership?.role ?? inv.role;
        await recordAudit(tx, {
          teamId: inv.teamId,
          actorUserId: account.id,
          action: 'invitation.accepted',
          targetType: 'invitation',
          targetId: inv.id,
          details: { role },
        });
        return { user: publicUser(account), team: { id: team.id, name: team.name, role }, ...(token ? { token } : {}) };
      });
    },
  };
}

export type InvitationsService = ReturnType<typeof createInvitationsService>;
