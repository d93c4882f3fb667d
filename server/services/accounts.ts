import { randomBytes } from 'node:crypto';
import bcrypt from 'bcryptjs';
import type { Logger } from '../config';
import type { LoginBody, MeResponse, SignupBody, User } from '../contracts';
import type { Database, UserRecord } from '../db';
import { badRequest, conflict, isAppError, tokenExpired, tokenUsed, unauthenticated } from '../errors';
import { passwordResetMail } from '../mail/templates';
import { recordAudit } from './audit';
import type { MailService } from './mail';
import { hashToken, newOneTimeToken } from './one-time-tokens';
import type { SessionClaims, SessionTokens } from './session-tokens';

export const passwordResetTtlMs = 60 * 60 * 1000;

export const publicUser = (u: UserRecord): User => ({ id: u.id, email: u.email, name: u.name, createdAt: u.createdAt });

export interface AccountsDeps {
  db: Database;
  sessions: SessionTokens;
  mail: MailService;
  logger: Logger;
  bcryptCost: number;
  publicUrl: string;
  now?: () => Date;
}

export function createAccountsService(deps: AccountsDeps) {
  const now = deps.now ?? (() => new Date());
  // Unknown e-mails are compared against this hash so they cost the same time as a wrong password.
  let dummyHash: Promise<string> | undefined;
  const dummy = () => (dummyHash ??= bcrypt.hash(randomBytes(16).toString('hex'), deps.bcryptCost));
  // Computed up front so the first sign-in with an unknown address is not the slow one.
  void dummy().catch(() => undefined);
  const background = new Set<Promise<void>>();

  async function sendResetLink(email: string): Promise<void> {
    const user = await deps.db.repos.users.findByEmail(email);
    if (!user) return;
    const { token, hash } = newOneTimeToken();
    const expiresAt = new Date(now().getTime() + passwordResetTtlMs);
    // The row commits only if the mail went out, so a failed send leaves no live link behind.
    await deps.db.transaction(async (tx) => {
      await tx.passwordResets.spendAllForUser(user.id, now());
      await tx.passwordResets.create({ userId: user.id, tokenHash: hash, expiresAt });
      await recordAudit(tx, { teamId: null, actorUserId: user.id, action: 'password_reset.requested', targetType: 'user', targetId: user.id });
      await deps.mail.send(
        user.email,
        passwordResetMail({ name: user.name, link: `${deps.publicUrl}/reset-password/${token}`, expiresAt }),
      );
    });
  }

  return {
    async signup(body: SignupBody) {
      const passwordHash = await bcrypt.hash(body.password, deps.bcryptCost);
      const result = await deps.db
        .transaction(async (tx) => {
          const user = await tx.users.create({ email: body.email, name: body.name, passwordHash });
          const team = await tx.teams.create(body.teamName);
          await tx.memberships.create({ teamId: team.id, userId: user.id, role: 'admin' });
          await recordAudit(tx, { teamId: null, actorUserId: user.id, action: 'user.signed_up', targetType: 'user', targetId: user.id });
          await recordAudit(tx, { teamId: team.id, actorUserId: user.id, action: 'team.created', targetType: 'team', targetId: team.id, details: { name: team.name } });
          return { user, team };
        })
        .catch((err: unknown) => {
          if (isAppError(err) && err.code === 'conflict') {
            throw conflict('An account with this e-mail already exists', { field: 'email' });
          }
          throw err;
        });
      return {
        user: publicUser(result.user),
        team: { id: result.team.id, name: result.team.name, role: 'admin' as const },
        token: deps.sessions.issue(result.user),
      };
    },

    async login(body: LoginBody) {
      const user = await deps.db.repos.users.findByEmail(body.email);
      const ok = await bcrypt.compare(body.password, user?.passwordHash ?? (await dummy()));
      // One message for both cases, so the response never tells which addresses have accounts.
      if (!user || !ok) throw unauthenticated('Incorrect e-mail or password');
      return { user: publicUser(user), token: deps.sessions.issue(user) };
    },

    /** The user a session token names, or null when the user is gone or the token predates a password reset. */
    async sessionUser(claims: Partial<SessionClaims>): Promise<User | null> {
      const id = Number(claims.sub);
      if (!Number.isSafeInteger(id) || id <= 0 || typeof claims.tv !== 'number') return null;
      const user = await deps.db.repos.users.findById(id);
      if (!user || user.tokenVersion !== claims.tv) return null;
      return publicUser(user);
    },

    async me(user: User): Promise<MeResponse> {
      return { user, teams: await deps.db.repos.memberships.listTeamsForUser(user.id) };
    },

    /**
     * Answers at once and sends in the background, so neither the status nor the timing reveals
     * whether the address has an account.
     */
    requestPasswordReset(email: string): void {
      const task = sendResetLink(email)
        .catch((err: unknown) => deps.logger.error({ err }, 'password reset e-mail failed'))
        .finally(() => background.delete(task));
      background.add(task);
    },

    async confirmPasswordReset(token: string, password: string): Promise<void> {
      const passwordHash = await bcrypt.hash(password, deps.bcryptCost);
      await deps.db.transaction(async (tx) => {
        const reset = await tx.passwordResets.findByTokenHash(hashToken(token), { forUpdate: true });
        if (!reset) throw badRequest('This password reset link is not valid');
        if (reset.usedAt) throw tokenUsed('This password reset link has already been used');
        if (new Date(reset.expiresAt).getTime() <= now().getTime()) {
          throw tokenExpired('This password reset link has expired; ask for a new one');
        }
        await tx.users.setPassword(reset.userId, passwordHash);
        await tx.passwordResets.spendAllForUser(reset.userId, now());
        await recordAudit(tx, { teamId: null, actorUserId: reset.userId, action: 'password_reset.completed', targetType: 'user', targetId: reset.userId });
      });
    },

    /** Resolves when every background e-mail has been handed to SMTP (or failed). */
    async settle(): Promise<void> {
      while (background.size > 0) await Promise.allSettled([...background]);
    },

    async hashPassword(password: string): Promise<string> {
      return bcrypt.hash(password, deps.bcryptCost);
    },
  };
}

export type AccountsService = ReturnType<typeof createAccountsService>;
