import { iso } from '../rows';
import { insertedId, type Executor } from './executor';

export interface UserRecord {
  id: number;
  email: string;
  name: string;
  passwordHash: string;
  tokenVersion: number;
  createdAt: string;
}

interface UserRow {
  id: number;
  email: string;
  name: string;
  password_hash: string;
  token_version: number;
  created_at: Date;
}

const toUser = (r: UserRow): UserRecord => ({
  id: r.id,
  email: r.email,
  name: r.name,
  passwordHash: r.password_hash,
  tokenVersion: r.token_version,
  createdAt: iso(r.created_at),
});

export function usersRepository(db: Executor) {
  return {
    async findById(id: number): Promise<UserRecord | null> {
      const row = await db<UserRow>('users').where({ id }).first();
      return row ? toUser(row) : null;
    },
    async findByEmail(email: string): Promise<UserRecord | null> {
      const row = await db<UserRow>('users').where({ email: email.toLowerCase() }).first();
      return row ? toUser(row) : null;
    },
    async create(input: { email: string; name: string; passwordHash: string }): Promise<UserRecord> {
      const id = insertedId(
        await db('users').insert({ email: input.email.toLowerCase(), name: input.name, password_hash: input.passwordHash }),
      );
      const row = await db<UserRow>('users').where({ id }).first();
      return toUser(row!);
    },
    /** A new password also bumps the token version, which revokes every session issued before it. */
    async setPassword(id: number, passwordHash: string): Promise<void> {
      await db('users')
        .where({ id })
        .update({
          password_hash: passwordHash,
          token_version: db.raw('token_version + 1'),
          updated_at: db.raw('CURRENT_TIMESTAMP(3)'),
        });
    },
    async count(): Promise<number> {
      const row = (await db('users').count({ n: '*' }).first()) as { n: number | string } | undefined;
      return Number(row?.n ?? 0);
    },
  };
}

export type UsersRepository = ReturnType<typeof usersRepository>;
