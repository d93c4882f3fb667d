import { randomBytes } from 'node:crypto';
import type { Logger } from '../config';
import type { ChangePasswordBody, LoginBody, MeResponse, SignupCompleteBody, SignupLinkPreview, TeamWithRole, User } from '../contracts';
import type { Database, Repositories, UserRecord } from '../db';
import { badRequest, conflict, notFound, tokenExpired, tokenUsed, unauthenticated, validationFailed } from '../errors';
import { passwordResetMail, signupExistingMail, signupLinkMail } from '../mail/templates';
import { recordAudit } from './audit';
import type { LoginThrottle } from './login-throttle';
import { accountMailKinds, type MailOutbox } from './mail-queue';
import { hashToken, newOneTimeToken } from './one-time-tokens';
import type { PasswordHasher } from './passwords';
import type { SessionClaims, SessionTokens } from './session-tokens';

export const passwordResetTtlMs = 60 * 60 * 1000;
/** A sign-up link lives a day: long enough to reach a mailbox checked once a day, short enough to go stale (common practice). */
export const signupLinkTtlMs = 24 * 60 * 60 * 1000;
/**
 * Account mail (sign-up links, "you already have an account", resets) one address receives per hour at most;
 * beyond it requests are answered as usual but send nothing, so nobody can flood a mailbox through the studio.
 */
export const accountMailPerAddressPerHour = 5;
/** Last-seen times are written at most this often per session, not on every request. */
const lastSeenResolutionMs = 5 * 60 * 1000;

export const publicUser = (u: UserRecord): User => ({ id: u.id, email: u.email, name: u.name, createdAt: u.createdAt });

export interface AccountsDeps {
  db: Database;
  sessions: SessionTokens;
  mail: MailOutbox & { drain(): Promise<void> };
  passwords: PasswordHasher;
  throttle: LoginThrottle;
  logger: Logger;
  publicUrl: string;
  now?: () => Date;
}

/** Who is calling, as authentication found it: the user and the id of the session their token names. */
export interface Caller {
  user: User;
  sessionId: string;
}

/** Rejects a one-time link that can no longer be used, naming why. */
function ensureLinkUsable(link: { usedAt: string | null; expiresAt: string } | null, at: Date, what: string): asserts link {
  if (!link) throw badRequest(`This ${what} link is not valid`);
  if (link.usedAt) throw tokenUsed(`This ${what} link has already been used`);
  if (new Date(link.expiresAt).getTime() <= at.getTime()) throw tokenExpired(`This ${what} link has expired; ask for a new one`);
}

export function createAccountsService(deps: AccountsDeps) {
  const now = deps.now ?? (() => new Date());
  // Unknown e-mails are compared against this hash so they cost the same time as a wrong password.
  let dummyHash: Promise<string> | undefined;
  const dummy = () => (dummyHash ??= deps.passwords.hash(randomBytes(16).toString('hex')));
  // Computed up front so the first sign-in with an unknown address is not the slow one.
  void dummy().catch(() => undefined);
  const background = new Set<Promise<void>>();
  // Told after sessions of a user end (sign-out, password change, reset) has committed, so long-lived responses
  // opened with them (event streams) re-check at once instead of at their next heartbeat.
  const sessionListeners = new Set<(userId: number) => void>();
  const sessionsEnded = (userId: number) => {
    for (const listener of sessionListeners) {
      try {
        listener(userId);
      } catch (err) {
        deps.logger.error({ err }, 'a session listener failed');
      }
    }
  };
  // The tail of each address's background work: one address's requests run one after another, so the hourly
  // share of account mail (count, then insert) holds however many arrive at once (one process per database).
  const perAddress = new Map<string, Promise<void>>();

  /** Runs work after the answer has gone, so neither status nor timing tells whether an address has an account. */
  function inBackground(what: string, email: string, work: () => Promise<void>): void {
    const key = email.toLowerCase();
    const task = (perAddress.get(key) ?? Promise.resolve())
      .then(work)
      .catch((err: unknown) => deps.logger.error({ err }, `${what} failed`))
      .finally(() => {
        background.delete(task);
        if (perAddress.get(key) === task) perAddress.delete(key);
      });
    perAddress.set(key, task);
    background.add(task);
  }

  /** False (and nothing is sent) once the address had its hour's share of account mail. */
  async function mayMail(tx: Repositories, email: string): Promise<boolean> {
    const since = new Date(now().getTime() - 60 * 60 * 1000);
    const sent = await tx.mailQueue.countRecent(email, accountMailKinds, since);
    if (sent < accountMailPerAddressPerHour) return true;
    deps.logger.info({ kinds: accountMailKinds }, 'account mail to one address over its hourly share; not sent');
    return false;
  }

  /** A new server-side session for the user, written through `tx`; returns the signed token naming it. */
  async function startSession(tx: Repositories, user: { id: number }): Promise<string> {
    const at = now();
    const sessionId = deps.sessions.newSessionId();
    await tx.sessions.pruneForUser(user.id, at);
    await tx.sessions.create({ id: sessionId, userId: user.id, createdAt: at, expiresAt: new Date(at.getTime() + deps.sessions.ttlSeconds * 1000) });
    return deps.sessions.sign({ userId: user.id, sessionId });
  }

  async function sendSignupMail(email: string): Promise<void> {
    await deps.db.transaction(async (tx) => {
      if (!(await mayMail(tx, email))) return;
      const user = await tx.users.findByEmail(email);
      if (user) {
        await deps.mail.enqueue(tx, {
          teamId: null,
          kind: 'signup_existing',
          to: user.email,
          content: signupExistingMail({ name: user.name, signInLink: `${deps.publicUrl}/sign-in`, resetLink: `${deps.publicUrl}/forgot-password` }),
        });
        return;
      }
      const { token, hash } = newOneTimeToken();
      const at = now();
      const expiresAt = new Date(at.getTime() + signupLinkTtlMs);
      // Only the newest link of an address works.
      await tx.signupLinks.spendAllForEmail(email, at);
      await tx.signupLinks.create({ email, tokenHash: hash, createdAt: at, expiresAt });
      await deps.mail.enqueue(tx, { teamId: null, kind: 'signup_link', to: email, content: signupLinkMail({ link: `${deps.publicUrl}/sign-up/${token}`, expiresAt }) });
    });
  }

  async function sendResetLink(email: string): Promise<void> {
    const user = await deps.db.repos.users.findByEmail(email);
    if (!user) return;
    const { token, hash } = newOneTimeToken();
    const expiresAt = new Date(now().getTime() + passwordResetTtlMs);
    // The link and its mail commit together; the mail leaves after the commit (services/mail-queue.ts).
    await deps.db.transaction(async (tx) => {
      if (!(await mayMail(tx, user.email))) return;
      await tx.passwordResets.spendAllForUser(user.id, now());
      await tx.passwordResets.create({ userId: user.id, tokenHash: hash, expiresAt });
      await recordAudit(tx, { teamId: null, actorUserId: user.id, action: 'password_reset.requested', targetType: 'user', targetId: user.id });
      await deps.mail.enqueue(tx, {
        teamId: null,
        kind: 'password_reset',
        to: user.email,
        content: passwordResetMail({ name: user.name, link: `${deps.publicUrl}/reset-password/${token}`, expiresAt }),
      });
    });
  }

  return {
    /** Always accepted: a new address is mailed a link to finish, an existing one a note to its owner. */
    requestSignup(email: string): void {
      inBackground('sign-up e-mail', email, () => sendSignupMail(email));
    },

    async previewSignup(token: string): Promise<SignupLinkPreview> {
      const link = await deps.db.repos.signupLinks.findByTokenHash(hashToken(token));
      if (!link) throw notFound('Sign-up link');
      ensureLinkUsable(link, now(), 'sign-up');
      return { email: link.email, expiresAt: link.expiresAt };
    },

    /** Holding the mailed link proves the address: the account, its team and a session are made together. */
    async completeSignup(body: SignupCompleteBody): Promise<{ user: User; team: TeamWithRole; token: string }> {
      const tokenHash = hashToken(body.token);
      // The link is checked before the slow hash, so a made-up token costs no bcrypt.
      ensureLinkUsable(await deps.db.repos.signupLinks.findByTokenHash(tokenHash), now(), 'sign-up');
      const passwordHash = await deps.passwords.hash(body.password);
      return deps.db.transaction(async (tx) => {
        const link = await tx.signupLinks.findByTokenHash(tokenHash, { forUpdate: true });
        ensureLinkUsable(link, now(), 'sign-up');
        if (await tx.users.findByEmail(link.email)) throw conflict('This address already has an account; sign in instead', { field: 'email' });
        await tx.signupLinks.spendAllForEmail(link.email, now());
        const user = await tx.users.create({ email: link.email, name: body.name, passwordHash });
        const team = await tx.teams.create(body.teamName);
        await tx.memberships.create({ teamId: team.id, userId: user.id, role: 'admin' });
        await recordAudit(tx, { teamId: null, actorUserId: user.id, action: 'user.signed_up', targetType: 'user', targetId: user.id });
        await recordAudit(tx, { teamId: team.id, actorUserId: user.id, action: 'team.created', targetType: 'team', targetId: team.id, details: { name: team.name } });
        return { user: publicUser(user), team: { id: team.id, name: team.name, role: 'admin' as const }, token: await startSession(tx, user) };
      });
    },

    async login(body: LoginBody) {
      // A delayed account is refused before its password is looked at, so guesses in the delay cost nothing and count for nothing.
      deps.throttle.check(body.email);
      const user = await deps.db.repos.users.findByEmail(body.email);
      const ok = await deps.passwords.verify(body.password, user?.passwordHash ?? (await dummy()));
      // One message for both cases, so the response never tells which addresses have accounts.
      if (!user || !ok) {
        deps.throttle.failed(body.email);
        throw unauthenticated('Incorrect e-mail or password');
      }
      deps.throttle.succeeded(body.email);
      return { user: publicUser(user), token: await startSession(deps.db.repos, user) };
    },

    startSession,

    /** The caller a token names: its session must be live (not revoked, not expired) and its user must exist. */
    async sessionUser(claims: Partial<SessionClaims>): Promise<Caller | null> {
      const id = Number(claims.sub);
      if (!Number.isSafeInteger(id) || id <= 0 || typeof claims.jti !== 'string' || claims.jti.length === 0 || claims.jti.length > 64) return null;
      const at = now();
      const live = await deps.db.repos.sessions.findLive(claims.jti, id, at);
      if (!live) return null;
      if (!live.lastSeenAt || at.getTime() - new Date(live.lastSeenAt).getTime() > lastSeenResolutionMs) {
        await deps.db.repos.sessions.touch(claims.jti, at);
      }
      return { user: publicUser(live.user), sessionId: claims.jti };
    },

    /** Whether the session is still live (a long-lived response re-checks it: sign-out and password changes end it). */
    async sessionIsLive(userId: number, sessionId: string): Promise<boolean> {
      return (await deps.db.repos.sessions.findLive(sessionId, userId, now())) !== null;
    },

    /** Ends the session the request's token names (cookie or Bearer); a missing or dead one is no error. */
    async logout(caller: { userId: number; sessionId: string } | undefined): Promise<void> {
      if (!caller) return;
      if (await deps.db.repos.sessions.revoke(caller.sessionId, now())) sessionsEnded(caller.userId);
    },

    onSessionsEnded(listener: (userId: number) => void): () => void {
      sessionListeners.add(listener);
      return () => sessionListeners.delete(listener);
    },

    async me(user: User): Promise<MeResponse> {
      return { user, teams: await deps.db.repos.memberships.listTeamsForUser(user.id) };
    },

    /** Needs the current password; ends every other session of the account and keeps the caller's. */
    async changePassword(caller: Caller, body: ChangePasswordBody): Promise<void> {
      deps.throttle.check(caller.user.email);
      const record = await deps.db.repos.users.findById(caller.user.id);
      if (!record) throw unauthenticated();
      if (!(await deps.passwords.verify(body.currentPassword, record.passwordHash))) {
        deps.throttle.failed(caller.user.email);
        throw validationFailed('The current password is not correct', [{ path: 'currentPassword', message: 'The current password is not correct', location: 'body' }]);
      }
      deps.throttle.succeeded(caller.user.email);
      const passwordHash = await deps.passwords.hash(body.newPassword);
      await deps.db.transaction(async (tx) => {
        await tx.users.setPassword(record.id, passwordHash);
        await tx.sessions.revokeAllForUser(record.id, now(), caller.sessionId);
        // A reset link asked for earlier would otherwise still set a password over this one.
        await tx.passwordResets.spendAllForUser(record.id, now());
        await recordAudit(tx, { teamId: null, actorUserId: record.id, action: 'password.changed', targetType: 'user', targetId: record.id });
      });
      sessionsEnded(record.id);
    },

    /**
     * Answers at once and queues in the background, so neither the status nor the timing reveals
     * whether the address has an account.
     */
    requestPasswordReset(email: string): void {
      inBackground('password reset e-mail', email, () => sendResetLink(email));
    },

    /** Sets the new password and ends every session of the account. */
    async confirmPasswordReset(token: string, password: string): Promise<void> {
      const tokenHash = hashToken(token);
      // The token is checked before the slow hash, so a made-up token costs no bcrypt.
      ensureLinkUsable(await deps.db.repos.passwordResets.findByTokenHash(tokenHash), now(), 'password reset');
      const passwordHash = await deps.passwords.hash(password);
      const userId = await deps.db.transaction(async (tx) => {
        const reset = await tx.passwordResets.findByTokenHash(tokenHash, { forUpdate: true });
        ensureLinkUsable(reset, now(), 'password reset');
        await tx.users.setPassword(reset.userId, passwordHash);
        await tx.passwordResets.spendAllForUser(reset.userId, now());
        await tx.sessions.revokeAllForUser(reset.userId, now());
        await recordAudit(tx, { teamId: null, actorUserId: reset.userId, action: 'password_reset.completed', targetType: 'user', targetId: reset.userId });
        return reset.userId;
      });
      sessionsEnded(userId);
    },

    /** Resolves when every background request has written its rows and queued its mail. */
    async flush(): Promise<void> {
      while (background.size > 0) await Promise.allSettled([...background]);
    },

    /** flush(), then the queue delivers (or reschedules) whatever is due: what a test waits for. */
    async settle(): Promise<void> {
      while (background.size > 0) await Promise.allSettled([...background]);
      await deps.mail.drain();
    },

    async hashPassword(password: string): Promise<string> {
      return deps.passwords.hash(password);
    },
  };
}

export type AccountsService = ReturnType<typeof createAccountsService>;
