// MariaDB/mysql2 and knex conditions that mean "the database cannot be reached right now", not "the query is wrong".
const connectionCodes = new Set([
  'ECONNREFUSED',
  'ECONNRESET',
  'ETIMEDOUT',
  'EHOSTUNREACH',
  'ENOTFOUND',
  'EPIPE',
  'PROTOCOL_CONNECTION_LOST',
  'PROTOCOL_SEQUENCE_TIMEOUT',
  'ER_CON_COUNT_ERROR',
  'ER_SERVER_SHUTDOWN',
  'ER_TOO_MANY_USER_CONNECTIONS',
  'ER_ACCESS_DENIED_ERROR',
  'ER_BAD_DB_ERROR',
]);

/** True for errors that should surface as 503 service_unavailable rather than 500. */
export function isConnectionError(err: unknown): boolean {
  if (!err || typeof err !== 'object') return false;
  const e = err as { code?: unknown; name?: unknown; errors?: unknown; cause?: unknown };
  if (e.name === 'KnexTimeoutError') return true;
  if (typeof e.code === 'string' && connectionCodes.has(e.code)) return true;
  // Node wraps failed connects to several addresses in an AggregateError.
  if (Array.isArray(e.errors) && e.errors.some(isConnectionError)) return true;
  if (e.cause && e.cause !== err) return isConnectionError(e.cause);
  return false;
}
