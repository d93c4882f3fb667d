// Run by `npm start` before the server: makes the compute workers' token if there is none yet and prints, in one
// line, how to start a worker on this machine or another.
import { hostname } from 'node:os';
import { pathToFileURL } from 'node:url';
import { isLoopbackHost, loadConfig, rotateWorkerTokenFile, WorkerTokenError, workerToken, type Config } from '../server/config';
import { createWorkerRegistry } from '../server/jobs/compute/registry';

/** REDIS_URL as printed: a password is replaced by a placeholder, so it does not end up in terminal logs. */
export function printableRedisUrl(url: string): string {
  const parsed = new URL(url);
  if (parsed.password) parsed.password = 'PASSWORD';
  return parsed.toString().replace(/\/$/, '');
}

/** The studio's address for a worker: PUBLIC_URL when given, else HOST:PORT (a wildcard bind by this host's name). */
export function studioUrl(config: Config, publicUrlGiven: boolean): string {
  if (publicUrlGiven) return config.publicUrl;
  const wildcard = config.host === '0.0.0.0' || config.host === '::';
  const host = wildcard ? hostname() : config.host;
  return `http://${host.includes(':') ? `[${host}]` : host}:${config.port}`;
}

/** One line: the command that starts a compute worker against this studio. */
export function workerStartLine(config: Config, publicUrlGiven: boolean): string {
  const url = studioUrl(config, publicUrlGiven);
  const token = config.workerToken.value !== undefined ? 'WORKER_TOKEN=(the one set here)' : `WORKER_TOKEN_FILE=${config.workerToken.file}`;
  const command = `CELLWRIGHT_URL=${url} REDIS_URL=${printableRedisUrl(config.redis.url)} ${token} npm run worker`;
  const local = isLoopbackHost(new URL(url).hostname.replace(/^\[|\]$/g, '')) || isLoopbackHost(new URL(config.redis.url).hostname);
  const note = local ? ' (loopback addresses: for another machine set HOST, or PUBLIC_URL, and REDIS_URL to addresses it reaches, and copy the token file there with mode 0600)' : ' (on another machine, copy the token file there with mode 0600)';
  return `[start] to start a compute worker: ${command}${config.workerToken.value !== undefined ? '' : note}`;
}

/**
 * `npm run worker-token -- rotate`: a new token in the file, and every worker session of this studio ended, so a
 * leaked token or a retired machine loses access at once; workers holding the new token join again by themselves.
 */
async function rotate(config: Config): Promise<number> {
  if (config.workerToken.value !== undefined) {
    process.stderr.write('[worker-token] WORKER_TOKEN is set: change it where it is set (and restart the studio); there is no file to rotate\n');
    return 1;
  }
  rotateWorkerTokenFile(config.workerToken.file);
  const registry = createWorkerRegistry({ redisUrl: config.redis.url, prefix: `cw:${config.db.database}`, currentToken: () => workerToken(config, { create: false }) });
  try {
    const ended = await registry.revokeSessions();
    process.stderr.write(`[worker-token] new token written to ${config.workerToken.file}; ${ended} worker session(s) ended\n`);
  } finally {
    await registry.close();
  }
  return 0;
}

async function main(): Promise<number> {
  // No session is signed here; a placeholder keeps the configuration from creating the JWT key file.
  const config = loadConfig({ ...process.env, JWT_SECRET: process.env.JWT_SECRET || 'x'.repeat(32) });
  if (process.argv[2] === 'rotate') return rotate(config);
  if (process.argv[2] !== undefined) {
    process.stderr.write(`[worker-token] unknown command ${JSON.stringify(process.argv[2])}; use no argument (make and show) or "rotate"\n`);
    return 2;
  }
  try {
    workerToken(config, { create: true });
  } catch (err) {
    if (!(err instanceof WorkerTokenError)) throw err;
    process.stderr.write(`[start] ${err.message}\n`);
    return 1;
  }
  process.stderr.write(`${workerStartLine(config, Boolean(process.env.PUBLIC_URL))}\n`);
  return 0;
}

// Run as a command, not when imported (the tests use the functions).
if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) void main().then((code) => process.exit(code));
