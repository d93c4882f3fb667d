import { iso, isoOrNull } from '../rows';
import { insertedId, type Executor } from './executor';

export interface SignupLinkRecord {
  id: number;
  email: string;
  expiresAt: string;
  usedAt: string | null;
}

interface SignupLinkRow {
  id: number;
  email: string;
  expires_at: Date;
  used_at: Date | null;
}

const toLink = (r: SignupLinkRow): SignupLinkRecord => ({ id: r.id, email: r.email, expiresAt: iso(r.expires_at), usedAt: isoOrNull(r.used_at) });

export function signupLinksRepository(db: Executor) {
  return {
    async create(input: { email: string; tokenHash: string; createdAt: Date; expiresAt: Date }): Promise<number> {
      return insertedId(
        await db('signup_links').insert({
          email: input.email.toLowerCase(),
          token_hash: input.tokenHash,
          created_at: input.createdAt,
          expires_at: input.expiresAt,
        }),
      );
    },
    async findByTokenHash(tokenHash: string, opts: { forUpdate?: boolean } = {}): Promise<SignupLinkRecord | null> {
      const q = db('signup_links').where({ token_hash: tokenHash }).first('id', 'email', 'expires_at', 'used_at');
      const row = (await (opts.forUpdate ? q.forUpdate() : q)) as SignupLinkRow | undefined;
      return row ? toLink(row) : null;
    },
    /** Spends every unused link of the address: a newer request or a finished sign-up leaves older links dead. */
    async spendAllForEmail(email: string, at: Date): Promise<void> {
      await db('signup_links').where({ email: email.toLowerCase() }).whereNull('used_at').update({ used_at: at });
    },
  };
}

export type SignupLinksRepository = ReturnType<typeof signupLinksRepository>;
