import { iso, isoOrNull } from '../rows';
import { insertedId, type Executor } from './executor';

export interface PasswordResetRecord {
  id: number;
  userId: number;
  expiresAt: string;
  usedAt: string | null;
}

interface PasswordResetRow {
  id: number;
  user_id: number;
  expires_at: Date;
  used_at: Date | null;
}

const toReset = (r: PasswordResetRow): PasswordResetRecord => ({
  id: r.id,
  userId: r.user_id,
  expiresAt: iso(r.expires_at),
  usedAt: isoOrNull(r.used_at),
});

export function passwordResetsRepository(db: Executor) {
  return {
    async create(input: { userId: number; tokenHash: string; expiresAt: Date }): Promise<number> {
      return insertedId(
        await db('password_resets').insert({ user_id: input.userId, token_hash: input.tokenHash, expires_at: input.expiresAt }),
      );
    },
    async findByTokenHash(tokenHash: string, opts: { forUpdate?: boolean } = {}): Promise<PasswordResetRecord | null> {
      const q = db('password_resets')
        .where({ token_hash: tokenHash })
        .first('id', 'user_id', 'expires_at', 'used_at');
      const row = (await (opts.forUpdate ? q.forUpdate() : q)) as PasswordResetRow | undefined;
      return row ? toReset(row) : null;
    },
    /** Marks every unused link of the user as spent: after one reset (or a new request) older links are dead. */
    async spendAllForUser(userId: number, at: Date): Promise<void> {
      await db('password_resets').where({ user_id: userId }).whereNull('used_at').update({ used_at: at });
    },
  };
}

export type PasswordResetsRepository = ReturnType<typeof passwordResetsRepository>;
