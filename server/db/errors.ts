import { AppError, conflict, isAppError, isConnectionError, serviceUnavailable } from '../errors';

/** MariaDB error codes that are the caller's fault, as AppErrors; connection loss as 503; the rest unchanged. */
export function translateDbError(err: unknown): unknown {
  if (isAppError(err)) return err;
  // The driver's error stays as the cause: a job's final write tells a passing outage from a real failure by it.
  if (isConnectionError(err)) return Object.assign(serviceUnavailable(), { cause: err });
  const code = (err as { code?: string } | null)?.code;
  if (code === 'ER_DUP_ENTRY') return conflict('That record already exists');
  if (code === 'ER_NO_REFERENCED_ROW_2' || code === 'ER_NO_REFERENCED_ROW') {
    return new AppError('not_found', 404, 'A referenced record does not exist');
  }
  // 1451: a delete blocked by a RESTRICT reference (an image a run used); callers may name the referrer.
  if (code === 'ER_ROW_IS_REFERENCED_2' || code === 'ER_ROW_IS_REFERENCED') {
    return conflict('This record is still in use and cannot be deleted', { reason: 'in_use' });
  }
  if (code === 'ER_LOCK_DEADLOCK' || code === 'ER_LOCK_WAIT_TIMEOUT') {
    return Object.assign(new AppError('service_unavailable', 503, 'The database is busy; try again'), { cause: err });
  }
  return err;
}

export const isDuplicateEntry = (err: unknown) => (err as { code?: string } | null)?.code === 'ER_DUP_ENTRY';
