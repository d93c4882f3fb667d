import bcrypt from 'bcryptjs';

/** Hashing and checking passwords; injected so tests can see when (and whether) the slow work runs. */
export interface PasswordHasher {
  hash(password: string): Promise<string>;
  verify(password: string, hash: string): Promise<boolean>;
}

export function createPasswordHasher(cost: number): PasswordHasher {
  return {
    hash: (password) => bcrypt.hash(password, cost),
    verify: (password, hash) => bcrypt.compare(password, hash),
  };
}
