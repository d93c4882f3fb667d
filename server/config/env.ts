import { randomBytes } from 'node:crypto';
import { chmodSync, existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { isIP } from 'node:net';
import { availableParallelism } from 'node:os';
import path from 'node:path';
import { z } from 'zod';
import { WORKER_TOKEN_MIN_LENGTH } from './worker-token';

// Environment strings "true"/"1"/"yes" mean on; anything else explicit means off, absent means the default.
const flag = (fallback: boolean) =>
  z
    .string()
    .optional()
    .transform((v) => (v === undefined || v === '' ? fallback : /^(1|true|yes|on)$/i.test(v.trim())));

const port = (fallback: number) => z.coerce.number().int().min(0).max(65535).default(fallback);
export const optionalString = z
  .string()
  .optional()
  .transform((v) => (v === undefined || v === '' ? undefined : v));

/**
 * A web origin as browsers send it in the Origin header (RFC 6454 §6.2): http(s), host, optional port, nothing
 * else. Written with a path, query or credentials it is refused rather than cut down, so a typo cannot widen it.
 */
const webOrigin = z.string().transform((text, ctx) => {
  let url: URL;
  try {
    url = new URL(text);
  } catch {
    ctx.addIssue({ code: 'custom', message: `${JSON.stringify(text)} is not a URL (expected an origin like https://studio.example.test)` });
    return z.NEVER;
  }
  const bare = url.pathname === '/' && !url.search && !url.hash && !url.username && !url.password && !text.endsWith('?') && !text.endsWith('#');
  if (!['http:', 'https:'].includes(url.protocol) || !bare) {
    ctx.addIssue({ code: 'custom', message: `${JSON.stringify(text)} is not an origin (expected scheme, host and optional port, like https://studio.example.test)` });
    return z.NEVER;
  }
  return url.origin;
});

// Comma-separated; blanks around the commas and empty items are ignored.
const originList = z
  .string()
  .optional()
  .transform((v) => (v ?? '').split(',').map((s) => s.trim()).filter((s) => s !== ''))
  .pipe(z.array(webOrigin));

/**
 * Express's 'trust proxy': off, a hop count, or the proxies' addresses/subnets (or the names loopback, linklocal,
 * uniquelocal). `true` is refused: it would believe any client's X-Forwarded-For, so anyone could pick the
 * address the rate limits count.
 */
const proxyNames = new Set(['loopback', 'linklocal', 'uniquelocal']);
const trustProxy = z
  .string()
  .optional()
  .transform((v, ctx): false | number | string[] => {
    const value = (v ?? '').trim();
    if (value === '' || /^(0|false|no|off)$/i.test(value)) return false;
    if (/^[1-9][0-9]?$/.test(value)) return Number(value);
    if (/^(1|true|yes|on)$/i.test(value)) {
      ctx.addIssue({ code: 'custom', message: 'TRUST_PROXY=true would trust any X-Forwarded-For; give the proxy address (e.g. loopback) or a hop count' });
      return z.NEVER;
    }
    const entries = value.split(',').map((e) => e.trim());
    for (const entry of entries) {
      const [address, prefix, extra] = entry.split('/');
      const okAddress = proxyNames.has(address) ? prefix === undefined : isIP(address) !== 0;
      const okPrefix = prefix === undefined || (/^\d{1,3}$/.test(prefix) && Number(prefix) <= (isIP(address) === 6 ? 128 : 32));
      if (!okAddress || !okPrefix || extra !== undefined) {
        ctx.addIssue({ code: 'custom', message: `TRUST_PROXY entry "${entry}" is not an IP address, a subnet or loopback/linklocal/uniquelocal` });
        return z.NEVER;
      }
    }
    return entries;
  });

/**
 * Where the job queues live: redis:// or rediss:// (TLS), a host, an optional port, credentials and database number
 * (the form ioredis reads). Anything else is refused rather than guessed at.
 */
export const redisUrl = z.string().transform((text, ctx) => {
  let url: URL | undefined;
  try {
    url = new URL(text);
  } catch {
    url = undefined;
  }
  const database = url?.pathname.replace(/^\//, '') ?? '';
  if (!url || !['redis:', 'rediss:'].includes(url.protocol) || url.hostname === '' || !/^[0-9]*$/.test(database) || url.search || url.hash) {
    ctx.addIssue({ code: 'custom', message: `${JSON.stringify(text)} is not a Redis URL (expected redis://[user:password@]host[:port][/database], or rediss:// for TLS)` });
    return z.NEVER;
  }
  return text;
});

const schema = z.object({
  PORT: port(8420),
  HOST: z.string().min(1).default('127.0.0.1'),
  NODE_ENV: z.enum(['development', 'production', 'test']).default('development'),
  DATA_DIR: z.string().min(1).default('./data'),
  DB_HOST: z.string().min(1).default('127.0.0.1'),
  DB_PORT: port(3407),
  DB_NAME: z.string().min(1).max(64).default('cellwright'),
  DB_USER: z.string().min(1).default('cellwright'),
  DB_PASSWORD: z.string().default('cellwright-dev'),
  // 6379 is a system Redis's port; the private instance keeps clear of it (scripts/redis.sh refuses it too).
  REDIS_PORT: port(6407).refine((p) => p !== 6379, 'REDIS_PORT must not be 6379, the port of a system Redis; set REDIS_URL to use that one'),
  REDIS_URL: optionalString.pipe(redisUrl.optional()),
  WORKER_TOKEN: optionalString.pipe(z.string().min(WORKER_TOKEN_MIN_LENGTH, `WORKER_TOKEN must be at least ${WORKER_TOKEN_MIN_LENGTH} characters`).optional()),
  WORKER_TOKEN_FILE: optionalString,
  JWT_SECRET: optionalString.pipe(z.string().min(32, 'JWT_SECRET must be at least 32 characters').optional()),
  JWT_TTL_SECONDS: z.coerce.number().int().min(1).default(43_200),
  // Below cost 10 a stolen hash table is cheap to brute-force (OWASP password storage guidance).
  BCRYPT_COST: z.coerce.number().int().min(10).max(16).default(12),
  SMTP_HOST: z.string().min(1).default('127.0.0.1'),
  SMTP_PORT: port(2526),
  SMTP_SECURE: flag(false),
  SMTP_USER: optionalString,
  SMTP_PASSWORD: optionalString,
  FAKE_SMTP: flag(true),
  MAIL_FROM: z.string().min(3).default('Cellwright <no-reply@cellwright.test>'),
  PUBLIC_URL: optionalString.pipe(z.string().url().optional()),
  // Origins besides PUBLIC_URL's from which mutating requests are accepted (a dev server, a second name).
  ALLOWED_ORIGINS: originList,
  LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).optional(),
  SEED_DEMO: flag(true),
  SERVE_CLIENT: optionalString,
  TRUST_PROXY: trustProxy,
  // Failed sign-ins per client address per 15 minutes, whatever the e-mail (a password spray counts too).
  LOGIN_RATE_LIMIT: z.coerce.number().int().min(1).default(20),
  // Per client address per hour, counted separately for sign-up requests, sign-up completions, reset requests
  // and reset confirmations.
  ACCOUNT_RATE_LIMIT: z.coerce.number().int().min(1).default(10),
  // Longest wait one account's consecutive failed sign-ins can impose (the delay doubles up to it).
  LOGIN_BACKOFF_MAX_SECONDS: z.coerce.number().int().min(1).max(3600).default(60),
  MAIL_MAX_ATTEMPTS: z.coerce.number().int().min(1).max(50).default(8),
  MAIL_RETRY_BASE_SECONDS: z.coerce.number().int().min(1).default(30),
  JOB_CONCURRENCY: z.coerce.number().int().min(1).default(1),
  // The studio computes tasks itself (a worker of its own) unless this is false: then only workers that joined do.
  WORKER_IN_SERVER: flag(true),
  // How long a job's lock in the queue lasts without renewal before another process may take the job over: the
  // time a stopped server or worker holds its jobs. Renewed at half this while the holder lives.
  JOB_LEASE_MS: z.coerce.number().int().min(2_000).max(600_000).default(30_000),
  // How often the job rows still to be done are checked against what the queue holds (a Redis that lost data).
  JOB_RECONCILE_MS: z.coerce.number().int().min(500).max(3_600_000).default(10_000),
  // A task that outgrows this heap fails its job instead of taking the server's memory with it.
  JOB_TASK_MAX_HEAP_MB: z.coerce.number().int().min(32).default(4096),
  ENGINE_THREADS: z.coerce.number().int().min(1).optional(),
  // What one training job may hold (vectors, working state, a decoded image); a run estimated above it is refused
  // when it is created. 2 GiB leaves a 24 GiB machine room for the server, MariaDB and other jobs.
  TRAINING_MAX_BYTES: z.coerce.number().int().min(1).default(2 * 1024 * 1024 * 1024),
  // Reconstruction views computed at once (each on a pool thread of its own), and how many more may wait for one.
  RECONSTRUCTION_MAX_CONCURRENT: z.coerce.number().int().min(1).default(2),
  RECONSTRUCTION_MAX_QUEUED: z.coerce.number().int().min(0).default(8),
  UPLOAD_MAX_BYTES: z.coerce.number().int().min(1).default(50 * 1024 * 1024),
  UPLOAD_MAX_FILES: z.coerce.number().int().min(1).default(200),
  // Bounds one request, whatever its file count: what one upload may put in DATA_DIR/tmp while it is checked.
  UPLOAD_MAX_REQUEST_BYTES: z.coerce.number().int().min(1).default(512 * 1024 * 1024),
  // Uploads in progress at once, in all and per user (the studio's page sends two at a time); more get 429.
  UPLOAD_MAX_CONCURRENT: z.coerce.number().int().min(1).default(8),
  UPLOAD_MAX_CONCURRENT_PER_USER: z.coerce.number().int().min(1).default(4),
  // Open run event streams per user; browsers hold about six HTTP/1.1 connections per host (from memory), so a
  // person rarely needs more than a few.
  SSE_MAX_STREAMS_PER_USER: z.coerce.number().int().min(1).default(8),
  IMAGE_MAX_PIXELS: z.coerce.number().int().min(1).default(40_000_000),
  ZIP_MAX_ENTRIES: z.coerce.number().int().min(1).default(2000),
  ZIP_MAX_TOTAL_BYTES: z.coerce.number().int().min(1).default(1024 * 1024 * 1024),
  // Stored originals no image names any more are deleted this often (0: never); see services/store-sweep.
  STORE_SWEEP_INTERVAL_MINUTES: z.coerce.number().int().min(0).default(360),
  // Bytes put more recently than this are never swept: an upload stores them before committing their row.
  STORE_SWEEP_GRACE_MINUTES: z.coerce.number().int().min(1).default(60),
});

export interface Config {
  readonly port: number;
  readonly host: string;
  readonly nodeEnv: 'development' | 'production' | 'test';
  readonly dataDir: string;
  readonly db: {
    readonly host: string;
    readonly port: number;
    readonly database: string;
    readonly user: string;
    readonly password: string;
  };
  /** The Redis that carries the job queues: REDIS_URL, or the private instance on loopback at REDIS_PORT. */
  readonly redis: { readonly url: string };
  /**
   * The shared secret compute workers register with: WORKER_TOKEN itself when set, otherwise read from (and, by the
   * studio, created in) `file` (server/config/worker-token.ts).
   */
  readonly workerToken: { readonly value?: string; readonly file: string };
  readonly jwt: { readonly secret: string; readonly ttlSeconds: number };
  readonly bcryptCost: number;
  readonly smtp: {
    readonly host: string;
    readonly port: number;
    readonly secure: boolean;
    readonly user?: string;
    readonly password?: string;
    readonly fake: boolean;
  };
  readonly mailFrom: string;
  /** Origin and base of every link the server writes, without a trailing slash. */
  readonly publicUrl: string;
  /** Origins mutating requests may come from: PUBLIC_URL's, then ALLOWED_ORIGINS, each once. */
  readonly allowedOrigins: readonly string[];
  readonly logLevel: string;
  readonly seedDemo: boolean;
  readonly serveClient: boolean;
  /** Express 'trust proxy': false (the default), a hop count, or the proxies' addresses and subnets. */
  readonly trustProxy: false | number | readonly string[];
  /** Failed sign-ins allowed per client address within loginRateWindowMs, across e-mails. */
  readonly loginRateLimit: number;
  readonly loginRateWindowMs: number;
  /** Sign-up, sign-up completion, reset and reset-confirm requests allowed per client address within accountRateWindowMs (each counted apart). */
  readonly accountRateLimit: number;
  readonly accountRateWindowMs: number;
  /** Per-account delay after consecutive failed sign-ins: free attempts, then baseMs doubling up to maxMs. */
  readonly loginBackoff: { readonly freeAttempts: number; readonly baseMs: number; readonly maxMs: number };
  /** Delivery of queued mail: attempts before giving up, and the first retry delay (doubling, at most an hour). */
  readonly mailQueue: { readonly maxAttempts: number; readonly retryBaseMs: number; readonly retryMaxMs: number };
  readonly jobConcurrency: number;
  /** The job engine's lease (lock) duration and how often rows are reconciled with the queue. */
  readonly jobQueue: { readonly leaseMs: number; readonly reconcileMs: number };
  /** Whether this server runs a compute worker of its own. */
  readonly workerInServer: boolean;
  /** Old-generation heap limit of each job pool thread, in MiB. */
  readonly jobTaskMaxHeapMb: number;
  readonly engineThreads: number;
  /** Most bytes one training job may hold, by the estimate made at run creation. */
  readonly trainingMaxBytes: number;
  /** Reconstructions computed at once and waiting; requests beyond both get 429. */
  readonly reconstructions: { readonly maxConcurrent: number; readonly maxQueued: number };
  /**
   * Limits of image uploads: bytes per file (or archive entry), parts, bytes per request, pixels, what archives
   * may unpack, and how many uploads may be in progress at once (in all and per user).
   */
  readonly uploads: {
    readonly maxFileBytes: number;
    readonly maxFiles: number;
    readonly maxRequestBytes: number;
    readonly maxConcurrent: number;
    readonly maxConcurrentPerUser: number;
    readonly maxImagePixels: number;
    readonly zipMaxEntries: number;
    readonly zipMaxTotalBytes: number;
  };
  /** Open server-sent event streams allowed per user. */
  readonly sseMaxStreamsPerUser: number;
  /** The content store sweep: how often (0 = off) and how old an unnamed original must be, in ms. */
  readonly storeSweep: { readonly intervalMs: number; readonly graceMs: number };
}

export class ConfigError extends Error {
  constructor(readonly issues: string[]) {
    super(`Invalid environment:\n  ${issues.join('\n  ')}`);
    this.name = 'ConfigError';
  }
}

/**
 * The secret survives restarts so sessions do too; it lives beside the data, readable by the owner only.
 */
function persistentJwtSecret(dataDir: string): string {
  const dir = path.join(dataDir, 'secrets');
  const file = path.join(dir, 'jwt-secret');
  if (existsSync(file)) {
    const stored = readFileSync(file, 'utf8').trim();
    if (stored.length >= 32) return stored;
  }
  mkdirSync(dir, { recursive: true, mode: 0o700 });
  const secret = randomBytes(48).toString('base64url');
  writeFileSync(file, secret + '\n', { mode: 0o600 });
  chmodSync(file, 0o600);
  return secret;
}

function deepFreeze<T extends object>(value: T): T {
  for (const child of Object.values(value)) {
    if (child && typeof child === 'object') deepFreeze(child);
  }
  return Object.freeze(value);
}

/** Parses an environment once; the result is frozen so nothing can change it at run time. */
export function loadConfig(source: NodeJS.ProcessEnv = process.env): Config {
  const parsed = schema.safeParse(source);
  if (!parsed.success) {
    throw new ConfigError(parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`));
  }
  const e = parsed.data;
  const dataDir = path.resolve(e.DATA_DIR);
  const publicUrl = (e.PUBLIC_URL ?? `http://127.0.0.1:${e.PORT}`).replace(/\/+$/, '');
  const serveClient =
    e.SERVE_CLIENT === undefined ? e.NODE_ENV === 'production' : /^(1|true|yes|on)$/i.test(e.SERVE_CLIENT);
  return deepFreeze({
    port: e.PORT,
    host: e.HOST,
    nodeEnv: e.NODE_ENV,
    dataDir,
    db: { host: e.DB_HOST, port: e.DB_PORT, database: e.DB_NAME, user: e.DB_USER, password: e.DB_PASSWORD },
    // The private instance binds loopback only (scripts/redis.sh); another host is reached through REDIS_URL.
    redis: { url: e.REDIS_URL ?? `redis://127.0.0.1:${e.REDIS_PORT}` },
    workerToken: {
      value: e.WORKER_TOKEN,
      file: path.resolve(e.WORKER_TOKEN_FILE ?? path.join(dataDir, 'secrets', 'worker-token')),
    },
    jwt: { secret: e.JWT_SECRET ?? persistentJwtSecret(dataDir), ttlSeconds: e.JWT_TTL_SECONDS },
    bcryptCost: e.BCRYPT_COST,
    smtp: {
      host: e.SMTP_HOST,
      port: e.SMTP_PORT,
      secure: e.SMTP_SECURE,
      user: e.SMTP_USER,
      password: e.SMTP_PASSWORD,
      fake: e.FAKE_SMTP,
    },
    mailFrom: e.MAIL_FROM,
    publicUrl,
    allowedOrigins: [...new Set([new URL(publicUrl).origin, ...e.ALLOWED_ORIGINS])],
    logLevel: e.LOG_LEVEL ?? (e.NODE_ENV === 'test' ? 'silent' : 'info'),
    seedDemo: e.SEED_DEMO,
    serveClient,
    trustProxy: e.TRUST_PROXY,
    loginRateLimit: e.LOGIN_RATE_LIMIT,
    loginRateWindowMs: 15 * 60 * 1000,
    accountRateLimit: e.ACCOUNT_RATE_LIMIT,
    accountRateWindowMs: 60 * 60 * 1000,
    // Five free attempts leave room for typos; then 1 s, 2 s, 4 s … (common practice for progressive delays,
    // OWASP Authentication Cheat Sheet, "Account Lockout").
    loginBackoff: { freeAttempts: 5, baseMs: 1000, maxMs: e.LOGIN_BACKOFF_MAX_SECONDS * 1000 },
    mailQueue: { maxAttempts: e.MAIL_MAX_ATTEMPTS, retryBaseMs: e.MAIL_RETRY_BASE_SECONDS * 1000, retryMaxMs: 60 * 60 * 1000 },
    jobConcurrency: e.JOB_CONCURRENCY,
    jobQueue: { leaseMs: e.JOB_LEASE_MS, reconcileMs: e.JOB_RECONCILE_MS },
    workerInServer: e.WORKER_IN_SERVER,
    jobTaskMaxHeapMb: e.JOB_TASK_MAX_HEAP_MB,
    engineThreads: e.ENGINE_THREADS ?? availableParallelism(),
    trainingMaxBytes: e.TRAINING_MAX_BYTES,
    reconstructions: { maxConcurrent: e.RECONSTRUCTION_MAX_CONCURRENT, maxQueued: e.RECONSTRUCTION_MAX_QUEUED },
    uploads: {
      maxFileBytes: e.UPLOAD_MAX_BYTES,
      maxFiles: e.UPLOAD_MAX_FILES,
      maxRequestBytes: e.UPLOAD_MAX_REQUEST_BYTES,
      maxConcurrent: e.UPLOAD_MAX_CONCURRENT,
      maxConcurrentPerUser: e.UPLOAD_MAX_CONCURRENT_PER_USER,
      maxImagePixels: e.IMAGE_MAX_PIXELS,
      zipMaxEntries: e.ZIP_MAX_ENTRIES,
      zipMaxTotalBytes: e.ZIP_MAX_TOTAL_BYTES,
    },
    sseMaxStreamsPerUser: e.SSE_MAX_STREAMS_PER_USER,
    storeSweep: { intervalMs: e.STORE_SWEEP_INTERVAL_MINUTES * 60_000, graceMs: e.STORE_SWEEP_GRACE_MINUTES * 60_000 },
  });
}

let processConfig: Config | undefined;

/** The configuration of this process, parsed from process.env on first use. */
export function getConfig(): Config {
  processConfig ??= loadConfig(process.env);
  return processConfig;
}
