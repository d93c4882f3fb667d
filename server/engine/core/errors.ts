/** Codes the engine raises; callers map them to HTTP 4xx or one stderr line. */
export type EngineErrorCode =
  | 'ENGINE_INVALID_INPUT'
  | 'ENGINE_TOO_FEW_VECTORS'
  | 'ENGINE_TOO_FEW_DISTINCT_VECTORS'
  /** An allocation would take a task past its memory budget (memory/budget.ts). */
  | 'ENGINE_MEMORY_LIMIT';

export class EngineError extends Error {
  readonly code: EngineErrorCode;
  readonly details?: Record<string, unknown>;

  constructor(code: EngineErrorCode, message: string, details?: Record<string, unknown>) {
    super(message);
    this.name = 'EngineError';
    this.code = code;
    this.details = details;
  }
}

/** The rejection of a cancelled call: the signal's own reason when it is an AbortError. */
export function abortError(signal: AbortSignal): Error {
  const reason: unknown = signal.reason;
  if (reason instanceof Error && reason.name === 'AbortError') return reason;
  const err = new Error('The operation was aborted', { cause: reason });
  err.name = 'AbortError';
  return err;
}

export function throwIfAborted(signal: AbortSignal | undefined): void {
  if (signal?.aborted) throw abortError(signal);
}
