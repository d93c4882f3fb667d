/**
 * The error the engine's I/O, format and metrics layers throw for bad input (core/errors.ts has the numeric core's own).
 * `code` lets callers (HTTP services, the CLI) map failures without parsing messages;
 * `message` is written to be shown to a person as is, naming the file or field at fault.
 */
export type EngineInputErrorCode =
  | 'ENGINE_INVALID_ARGUMENT'
  | 'ENGINE_INVALID_IMAGE'
  | 'ENGINE_INVALID_NPY'
  | 'ENGINE_INVALID_CODEBOOK'
  | 'ENGINE_INVALID_CONTAINER'
  | 'ENGINE_CHECKSUM_MISMATCH'
  | 'ENGINE_DIMENSION_MISMATCH'
  /** A variable-length code stream that is truncated, holds a pattern no code starts with, or has bytes past its end. */
  | 'ENGINE_INVALID_BITSTREAM'
  | 'ENGINE_UNSUPPORTED';

export class EngineInputError extends Error {
  override readonly name = 'EngineInputError';
  constructor(
    readonly code: EngineInputErrorCode,
    message: string,
    /** Path of the offending field, e.g. `codewords[3][7]`, when there is one. */
    readonly field?: string,
  ) {
    super(message);
  }
}
