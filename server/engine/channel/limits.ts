/** The channel model's limits and defaults, defined once (the command line's help, the contracts and the studio read them here). */

/**
 * Bit-error rates of a binary symmetric channel: above 0 and at most 0.5 (at 0.5 the received bits say nothing of the
 * sent ones; above it the channel is a better channel with its bits inverted). The default list spans the usual range
 * of interest, one decade a step, from a clean link to a badly faded one.
 */
export const BER = Object.freeze({ min: 1e-9, max: 0.5 });
export const DEFAULT_BERS: readonly number[] = Object.freeze([1e-5, 1e-4, 1e-3, 1e-2, 1e-1]);
/** At most this many rates in one curve: each costs seeds × images decodes. */
export const MAX_BERS = 12;

/** Simulations per rate, each with its own seed; the curve shows their mean squared error. */
export const CHANNEL_SEEDS = Object.freeze({ min: 1, max: 64, default: 5 });

/**
 * The closed-form expected distortion costs K · 2^b · d operations per rate (every sent index against every received
 * word), so it is computed up to 12 index bits (4096 codewords: about 10^9 operations at d = 64); beyond, only the
 * simulation is reported.
 */
export const EXPECTED_MAX_BITS = 12;

/**
 * Index assignment holds the K × K table of squared distances between codewords and tries K swaps per step, so it is
 * offered up to 10 index bits (1024 codewords: an 8 MiB table).
 */
export const REORDER_MAX_BITS = 10;
/**
 * The studio reorders while the request waits (on a pool thread), so it offers index assignment up to 8 index bits
 * (256 codewords: 3 to 10 s on one core of the development machine, `npm run bench`; 1024 made-up codewords took
 * 214 s). The command line goes to REORDER_MAX_BITS.
 */
export const STUDIO_REORDER_MAX_BITS = 8;
/** The bit-error rate index assignment designs for when none is given: 10^-2, where reordering visibly pays. */
export const DEFAULT_REORDER_BER = 1e-2;
/** A swap is taken only when it lowers the expected channel distortion by more than this fraction (float64 rounding in the sums is far below it). */
export const REORDER_MIN_GAIN = 1e-12;
