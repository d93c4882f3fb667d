/** A mistake in how the command was called (unknown option, missing value): exit status 2, like most Unix tools. */
export class CliUsageError extends Error {
  override readonly name = 'CliUsageError';
}

/** Any other failure the user can act on (missing file, bad data): exit status 1. */
export class CliInputError extends Error {
  override readonly name = 'CliInputError';
}

/** Collapses a message to the single line the error contract promises. */
export function oneLine(error: unknown): string {
  const text = error instanceof Error ? error.message : String(error);
  return text.replace(/\s*\n\s*/g, ' ').trim() || 'unknown error';
}
