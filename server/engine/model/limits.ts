/** The model's limits and defaults, defined once (the command line's help and the contracts read them from here). */

/**
 * False-alarm rate of anomaly thresholds: the fraction of training blocks allowed above the threshold. Default 0.001
 * ("flag what fewer than 0.1 % of training blocks reach"); at most 0.5 (beyond that a threshold flags the typical
 * block); at least 10⁻⁶, since no training set here is large enough to measure a smaller rate.
 */
export const ANOMALY_RATE = Object.freeze({ min: 1e-6, max: 0.5, default: 0.001 });

export const ANOMALY_SCORES = Object.freeze(['nll', 'distance'] as const);

export const DENOISE_ESTIMATORS = Object.freeze(['hard', 'mean'] as const);

/** Noise standard deviation on the 0..255 scale: 0 (none) up to 128, half the range, beyond which nothing of the image is left to find. */
export const DENOISE_SIGMA = Object.freeze({ min: 0, max: 128 });

/** Step between overlapping patch origins in pixels: 1 (every position, the best and slowest) up to a patch side. */
export const DENOISE_STEP = Object.freeze({ min: 1, max: 16, default: 1 });

/**
 * The caution every view of these models carries (command help, README, studio): the product's caution for lossy
 * codebooks, extended to anomaly maps and denoised images.
 */
export const MODEL_CAUTION =
  'Anomaly maps and denoised images come from a lossy model of the training patches and can mislead where images are used ' +
  'for diagnosis or safety inspection: an anomaly map is an aid to a qualified reviewer, not a detector to rely on, and a ' +
  'denoised image holds the codebook\'s guesses. Such use needs the applicable regulations and qualified review.';
