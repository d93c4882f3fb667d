import { randomBytes } from 'node:crypto';
import { chmodSync, mkdirSync, readFileSync, renameSync, statSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import type { Config } from './env';

/** Shortest token accepted, from WORKER_TOKEN or a file: 32 characters of base64url carry 192 bits. */
export const WORKER_TOKEN_MIN_LENGTH = 32;

/** A token file that cannot be used as it is; the message says what to do. */
export class WorkerTokenError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'WorkerTokenError';
  }
}

const errorCode = (err: unknown) => (err as NodeJS.ErrnoException | null)?.code;

/**
 * The token in `file`. A file that other users may read or write is refused, as OpenSSH refuses a private key with
 * such permissions (common practice for credentials kept in files): whoever can read it can register a worker and
 * be sent the studio's images, and whoever can write it can swap it.
 */
export function readWorkerTokenFile(file: string): string {
  const stat = statSync(file);
  if (!stat.isFile()) throw new WorkerTokenError(`worker token file ${file} is not a regular file`);
  const mode = stat.mode & 0o777;
  if ((mode & 0o077) !== 0) {
    throw new WorkerTokenError(
      `worker token file ${file} is open to other users (mode ${mode.toString(8).padStart(4, '0')}); ` +
        `it holds a credential, so it must be readable by its owner only: chmod 600 '${file}'`,
    );
  }
  const token = readFileSync(file, 'utf8').trim();
  if (token.length < WORKER_TOKEN_MIN_LENGTH) {
    throw new WorkerTokenError(`worker token file ${file} holds no token of at least ${WORKER_TOKEN_MIN_LENGTH} characters`);
  }
  return token;
}

/**
 * The token in `file`, made first when the file does not exist: 32 random bytes, base64url, in a file of mode 0600
 * inside a folder of mode 0700. An existing token is kept, so workers already started keep working.
 */
export function ensureWorkerTokenFile(file: string): { token: string; created: boolean } {
  try {
    return { token: readWorkerTokenFile(file), created: false };
  } catch (err) {
    if (errorCode(err) !== 'ENOENT') throw err;
  }
  mkdirSync(path.dirname(file), { recursive: true, mode: 0o700 });
  const token = randomBytes(32).toString('base64url');
  try {
    // 'wx' fails if the file appeared meanwhile (two starts at once): then the other one's token stands.
    writeFileSync(file, `${token}\n`, { mode: 0o600, flag: 'wx' });
  } catch (err) {
    if (errorCode(err) === 'EEXIST') return { token: readWorkerTokenFile(file), created: false };
    throw err;
  }
  // The mode given to open() is reduced by the umask; set it outright.
  chmodSync(file, 0o600);
  return { token, created: true };
}

/**
 * The worker token of this configuration: WORKER_TOKEN when set, otherwise the file's. The studio passes
 * `create: true` (it makes the token on first start); a compute worker only reads.
 */
export function workerToken(config: Pick<Config, 'workerToken'>, options: { create: boolean }): string {
  if (config.workerToken.value !== undefined) return config.workerToken.value;
  const file = config.workerToken.file;
  if (options.create) return ensureWorkerTokenFile(file).token;
  try {
    return readWorkerTokenFile(file);
  } catch (err) {
    if (errorCode(err) !== 'ENOENT') throw err;
    throw new WorkerTokenError(`worker token file ${file} does not exist: the studio writes it on its first start; copy it here (mode 0600) or set WORKER_TOKEN`);
  }
}

/**
 * Replaces the token in `file` with a new one (same modes): registrations with the old token are refused from
 * now on. Sessions of workers that joined with it are ended separately (the registry's revokeSessions).
 */
export function rotateWorkerTokenFile(file: string): string {
  mkdirSync(path.dirname(file), { recursive: true, mode: 0o700 });
  const token = randomBytes(32).toString('base64url');
  // Written aside and renamed over the old file, so no reader ever sees half a token.
  const partial = `${file}.${randomBytes(6).toString('hex')}.new`;
  writeFileSync(partial, `${token}\n`, { mode: 0o600, flag: 'wx' });
  chmodSync(partial, 0o600);
  renameSync(partial, file);
  return token;
}
